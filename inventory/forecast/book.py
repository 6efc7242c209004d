"""The forecast workbook: every series with its forecast and range, the settings and the
reasons behind them, and a native line chart (history, forecast, 10-90 % range) per
chosen series.

Charts are openpyxl's own, drawn by the spreadsheet program from the cells of the
``Chart data`` sheet, so they stay live if someone edits the numbers. Sheets are filled
through :func:`inventory.sheets.write.fill_sheet` (styled header, filters, text never
evaluated as a formula) and saved atomically.
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path

from openpyxl import Workbook
from openpyxl.chart import LineChart, Reference
from openpyxl.styles import Font

from inventory.forecast.report import ForecastReport, SeriesForecast
from inventory.sheets.write import SheetSpec, fill_sheet, put_cell, save_workbook

CHART_HISTORY = 24  # periods of history shown in a chart
CHARTS_PER_ROW = 2
CHART_W, CHART_H = 16.0, 7.5  # cm
ROWS_PER_CHART = 16
COLS_PER_CHART = 10


def period_label(report: ForecastReport, d: object) -> str:
    """"2026-12" for months, the Monday's date for weeks."""
    text = str(d)
    return text[:7] if report.freq == "M" else text[:10]


def forecast_sheet(report: ForecastReport) -> SheetSpec:
    """One row per series: what it is, the forecast per period, the cover range."""
    q_lo, q_hi = (f"{round(100 * q)} %" for q in report.quantiles)
    labels = [period_label(report, d) for d in report.forecast_periods]
    header = ["code", "kind", "unit", "class", "how it is forecast", "method (technical)",
              "installed base weight", "unit cost", "usage value (12 months)",
              *labels, "total over cover", f"total over cover {q_lo}",
              "total over cover median", f"total over cover {q_hi}"]
    rows = [[s.code, s.kind, s.unit, s.cls, s.phrase, s.method, s.ib_weight, s.unit_cost,
             round(s.usage_value, 2),
             *[round(x, 2) for x in s.forecast], round(s.cover_mean, 2), s.cover_low,
             s.cover_median, s.cover_high]
            for s in sorted(report.series, key=lambda s: (-s.usage_value, s.code))]
    fmt = {h: "0.00" for h in labels}
    fmt.update({"unit cost": "#,##0.00##", "usage value (12 months)": "#,##0.00",
                "total over cover": "0.00"})
    return SheetSpec("Forecast", header, rows, number_formats=fmt)


def about_sheet(report: ForecastReport) -> SheetSpec:
    """Settings, season and installed-base decisions, methods per class."""
    unit = "months" if report.freq == "M" else "weeks"
    rows: list[list[object]] = [
        ["today", report.today.isoformat()],
        ["series by", report.by],
        ["periods", unit],
        ["horizon", f"{report.horizon} {unit}"],
        ["cover (lead time + review)", f"{report.lead_time_months:g} + "
                                       f"{report.review_months:g} months = "
                                       f"{report.cover_periods:.2f} {unit}"],
        ["range", f"{round(100 * report.quantiles[0])} % to "
                  f"{round(100 * report.quantiles[1])} % quantiles (negative binomial)"],
        ["season", report.season.reason],
    ]
    months = ("Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov",
              "Dec")
    rows += [[f"seasonal index {m}", round(x, 3)]
             for m, x in zip(months, report.season.profile, strict=True)]
    ibi = report.installed_base
    if ibi is None:
        rows.append(["installed base", "not used (weekly periods or no service history)"])
    else:
        rows += [["installed base weight", ibi.weight], ["installed base", ibi.reason],
                 ["return probability", round(ibi.return_probability, 3)],
                 ["forks in the installed base", ibi.forks],
                 ["median ride hours per week", round(ibi.hours_per_week, 2)]]
    rows += [[f"method for {c}", m] for c, m in sorted(report.class_choice.items())]
    rows.append(["run time (s)", round(report.seconds, 2)])
    return SheetSpec("About", ["setting", "value"], rows, widths={"value": 90})


def _chart_block(ws, row: int, report: ForecastReport, s: SeriesForecast) -> tuple[int, int]:
    """Write one series' chart data from ``row``; returns (first data row, last data row)."""
    put_cell(ws, row, 1, s.code).font = Font(bold=True)
    put_cell(ws, row, 2, f"{s.kind}, {s.cls}, {s.label}")
    head = ["period", "history", "forecast", f"low {round(100 * report.quantiles[0])} %",
            f"high {round(100 * report.quantiles[1])} %"]
    for c, h in enumerate(head, start=1):
        put_cell(ws, row + 1, c, h).font = Font(bold=True)
    hist = list(zip(report.history_periods, s.history, strict=True))[-CHART_HISTORY:]
    r = row + 2
    first = r
    for d, v in hist:
        put_cell(ws, r, 1, period_label(report, d))
        put_cell(ws, r, 2, v)
        r += 1
    if hist:  # join the forecast line to the last actual
        put_cell(ws, r - 1, 3, hist[-1][1])
    for j, d in enumerate(report.forecast_periods):
        put_cell(ws, r, 1, period_label(report, d))
        put_cell(ws, r, 3, round(s.forecast[j], 3))
        put_cell(ws, r, 4, s.low[j])
        put_cell(ws, r, 5, s.high[j])
        r += 1
    return first, r - 1


def add_charts(wb: Workbook, report: ForecastReport, chosen: Sequence[SeriesForecast]) -> None:
    """A ``Chart data`` sheet and a ``Charts`` sheet with one line chart per chosen series."""
    data = wb.create_sheet("Chart data")
    charts = wb.create_sheet("Charts", index=1)
    put_cell(charts, 1, 1, f"Forecast by {report.by} from {report.today.isoformat()}: history, "
                      f"forecast and the {round(100 * report.quantiles[0])}-"
                      f"{round(100 * report.quantiles[1])} % range").font = Font(bold=True)
    row = 1
    unit = "month" if report.freq == "M" else "week"
    for k, s in enumerate(chosen):
        first, last = _chart_block(data, row, report, s)
        ch = LineChart()
        ch.title = f"{s.code} ({s.cls})"
        ch.y_axis.title = f"units per {unit}"
        ch.x_axis.title = unit
        ch.width, ch.height = CHART_W, CHART_H
        ch.add_data(Reference(data, min_col=2, max_col=5, min_row=first - 1, max_row=last),
                    titles_from_data=True)
        ch.set_categories(Reference(data, min_col=1, min_row=first, max_row=last))
        for ser, dash in zip(ch.series, (None, "dash", "sysDot", "sysDot"), strict=True):
            ser.smooth = False
            if dash:
                ser.graphicalProperties.line.dashStyle = dash
        anchor_row = 3 + (k // CHARTS_PER_ROW) * ROWS_PER_CHART
        anchor_col = 1 + (k % CHARTS_PER_ROW) * COLS_PER_CHART
        charts.add_chart(ch, f"{_col(anchor_col)}{anchor_row}")
        row = last + 3
    data.column_dimensions["A"].width = 12


def _col(i: int) -> str:
    from openpyxl.utils import get_column_letter

    return get_column_letter(i)


def write_forecast_book(path: str | Path, report: ForecastReport,
                        chosen: Sequence[SeriesForecast]) -> Path:
    """Write the workbook (Forecast, Charts, About, Chart data) atomically; returns the path."""
    wb = Workbook()
    wb.remove(wb.active)
    for spec in (forecast_sheet(report), about_sheet(report)):
        fill_sheet(wb.create_sheet(spec.name), spec)
    add_charts(wb, report, chosen)
    return save_workbook(wb, path)
