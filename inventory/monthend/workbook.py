"""The month-end workbook: a summary sheet with the key figures and native charts (usage by
month, stock value over the last twelve months, ABC Pareto), then one styled sheet per table
(frozen header, filters, number formats, problems highlighted).

Written with XlsxWriter, a writer made for large write-only workbooks with native charts:
rows go straight to the file (``constant_memory``), one shared format per column and
highlight, so a chain's ten thousand parts take a second or two. The charts are the
spreadsheet program's own, drawn from cell ranges on the ``Monthly`` and ``ABC-XYZ`` sheets,
so they stay live if someone edits the numbers.

Text is always written as text (``write_string``; formulas, URLs and numbers are never
guessed from strings): a part described as ``=HYPERLINK(...)`` stays that text, the same
guard as :mod:`inventory.sheets.write`. XlsxWriter is imported when a workbook is written.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from datetime import date, datetime
from decimal import Decimal
from pathlib import Path
from typing import Any

from inventory.monthend.report import MonthReport
from inventory.sheets.write import SheetSpec, replacing

MONEY = "#,##0.00"
QTY = "#,##0"
PCT = "0.0%"
RATIO = "0.00"
DAYS = "#,##0"
DATE = "yyyy-mm-dd"
DATETIME = "yyyy-mm-dd hh:mm"
#: Fills (RGB) of problem rows: red for past limits, dead stock and losses; amber for soon.
RED = "F8CBAD"
AMBER = "FFE699"
HEADER_FILL = "DDE4EE"  # as inventory.sheets.write's header
NEGATIVE_FONT = "C00000"
PARETO_TOP = 30

SHEETS = ("Summary", "Parts", "Usage by fork", "Count variances", "Slow and dead",
          "Expiring lots", "Below reorder", "ABC-XYZ", "Monthly")


def _fmt(header: Sequence[str], money=(), qty=(), pct=(), ratio=(), days=(), dates=()):
    out = {}
    for names, f in ((money, MONEY), (qty, QTY), (pct, PCT), (ratio, RATIO), (days, DAYS),
                     (dates, DATE)):
        for n in names:
            assert n in header, n
            out[n] = f
    return out


class _Formats:
    """One XlsxWriter format per (number format, fill, font colour, bold, size, align) in
    use, made on first use and shared by every cell that needs it."""

    def __init__(self, wb) -> None:
        self.wb = wb
        self.cache: dict[tuple, Any] = {}

    def get(self, number_format: str | None = None, fill: str | None = None,
            color: str | None = None, bold: bool = False, size: int | None = None,
            align: str | None = None):
        key = (number_format, fill, color, bold, size, align)
        if key == (None, None, None, False, None, None):
            return None
        if key not in self.cache:
            props: dict[str, Any] = {}
            if number_format:
                props["num_format"] = number_format
            if fill:
                props.update(pattern=1, bg_color=f"#{fill}")
            if color:
                props["font_color"] = f"#{color}"
            if bold:
                props["bold"] = True
            if size:
                props["font_size"] = size
            if align:
                props["align"] = align
            self.cache[key] = self.wb.add_format(props)
        return self.cache[key]


def _plain(value):
    if isinstance(value, Decimal):
        return float(value)
    return value


def _put(ws, row: int, col: int, value, fmt=None) -> None:
    """One cell: text always as text, numbers as numbers, dates as dates; NaN and infinity
    (no value) as an empty cell keeping its format."""
    if isinstance(value, Decimal):
        value = float(value)
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        if fmt is not None:
            ws.write_blank(row, col, None, fmt)
        return
    if isinstance(value, str):
        ws.write_string(row, col, value, fmt)
    elif isinstance(value, bool):
        ws.write_boolean(row, col, value, fmt)
    elif isinstance(value, datetime | date):
        if isinstance(value, datetime) and value.tzinfo is not None:
            value = value.replace(tzinfo=None)
        ws.write_datetime(row, col, value, fmt)
    elif isinstance(value, int | float):
        ws.write_number(row, col, value, fmt)
    elif hasattr(value, "value") and isinstance(value.value, str):  # enums
        ws.write_string(row, col, value.value, fmt)
    else:
        ws.write_string(row, col, str(value), fmt)


def _col(n: int) -> str:
    out = ""
    n += 1
    while n:
        n, r = divmod(n - 1, 26)
        out = chr(65 + r) + out
    return out


def _stream_sheet(wb, fmts: _Formats, spec: SheetSpec, rule: tuple[str, dict] | None = None,
                  negative_red: Sequence[str] = ()) -> None:
    """One table as a styled sheet: bold filled header, frozen, filtered, widths that fit
    (judged on the first 200 rows), the spec's number formats, whole rows filled where
    ``rule`` = (column, {value: fill}) matches, negative numbers in red in the named columns."""
    ws = wb.add_worksheet(spec.name[:31])
    header = list(spec.header)
    formats = [spec.number_formats.get(h) for h in header]
    red_cols = {header.index(h) for h in negative_red}
    key = header.index(rule[0]) if rule else None
    widths = [len(str(h)) + 2 for h in header]
    for row in spec.rows[:200]:
        for j, v in enumerate(row):
            shown = f"{v:,.2f}" if isinstance(v, float | Decimal) else str(v if v is not None else "")
            widths[j] = max(widths[j], min(60, len(shown) + 2))
    for j, h in enumerate(header):
        ws.set_column(j, j, spec.widths.get(h, widths[j]))
    ws.freeze_panes(1, 0)
    ws.autofilter(0, 0, max(0, len(spec.rows)), max(0, len(header) - 1))
    head = fmts.get(fill=HEADER_FILL, bold=True)
    for j, h in enumerate(header):
        ws.write_string(0, j, str(h), head)
    plain = [fmts.get(f) for f in formats]
    for i, row in enumerate(spec.rows, start=1):
        fill = rule[1].get(row[key]) if rule else None
        for j, v in enumerate(row):
            fmt = formats[j]
            if fmt is None and isinstance(v, date):
                fmt = DATETIME if isinstance(v, datetime) else DATE
            elif fill is None and j not in red_cols:
                _put(ws, i, j, v, plain[j])
                continue
            red = j in red_cols and isinstance(v, int | float | Decimal) and v < 0
            _put(ws, i, j, v, fmts.get(fmt, fill, NEGATIVE_FONT if red else None))


def _parts_sheet(r: MonthReport) -> SheetSpec:
    h = ["part", "description", "unit", "opening qty", "opening value", "receipts qty",
         "receipts value", "job issues qty", "job issues value", "other issues qty",
         "other issues value", "adjust qty", "adjust value", "count variance qty",
         "count variance value", "closing qty", "closing value", "turns (month, annualised)",
         "turns (12 months)", "days of supply", "ABC", "XYZ", "last issue", "status"]
    rows = [[p.part, p.description, p.unit, p.opening_qty, p.opening_value, p.receipts_qty,
             p.receipts_value, p.job_issues_qty, p.job_issues_value, p.other_issues_qty,
             p.other_issues_value, p.adjust_qty, p.adjust_value, p.count_qty, p.count_value,
             p.closing_qty, p.closing_value, p.turns, p.turns_12m, p.days_of_supply, p.abc,
             p.xyz, p.last_issue, p.status] for p in r.parts]
    return SheetSpec("Parts", h, rows, widths={"description": 36}, number_formats=_fmt(
        h, money=[x for x in h if x.endswith("value")],
        qty=[x for x in h if x.endswith("qty")],
        ratio=["turns (month, annualised)", "turns (12 months)"], days=["days of supply"],
        dates=["last issue"]))


def _sheets(r: MonthReport) -> list[tuple[SheetSpec, tuple[str, dict] | None]]:
    out: list[tuple[SheetSpec, tuple[str, dict] | None]] = []
    out.append((_parts_sheet(r), ("status", {"dead": RED, "slow": AMBER})))

    h = ["fork family", "service level", "jobs", "units", "value"]
    out.append((SheetSpec("Usage by fork", h, [[u.fork_family, u.service_level, u.jobs, u.units,
                                                u.value] for u in r.fork_usage],
                          number_formats=_fmt(h, money=["value"], qty=["jobs", "units"])), None))

    h = ["part", "description", "variance qty", "variance value", "closing qty", "result"]
    rows = [[p.part, p.description, p.count_qty, p.count_value, p.closing_qty,
             "loss" if p.count_qty < 0 else "gain"] for p in r.count_variances]
    out.append((SheetSpec("Count variances", h, rows, widths={"description": 36},
                          number_formats=_fmt(h, money=["variance value"],
                                              qty=["variance qty", "closing qty"])),
                ("result", {"loss": RED})))

    h = ["part", "description", "status", "on hand", "value", "last issue", "first arrival"]
    rows = [[p.part, p.description, p.status, p.closing_qty, p.closing_value, p.last_issue,
             p.first_in] for p in r.stock_problems]
    out.append((SheetSpec("Slow and dead", h, rows, widths={"description": 36},
                          number_formats=_fmt(h, money=["value"], qty=["on hand"],
                                              dates=["last issue", "first arrival"])),
                ("status", {"dead": RED, "slow": AMBER})))

    h = ["part", "lot", "cured", "material", "qty", "value", "storage limit", "status"]
    rows = [[e.lot.part, e.lot.lot, e.lot.cured, e.lot.material, e.lot.qty, e.lot.value,
             e.limit, "past limit" if e.status == "past" else "within 6 months"]
            for e in r.expiring_lots]
    out.append((SheetSpec("Expiring lots", h, rows,
                          number_formats=_fmt(h, money=["value"], qty=["qty"],
                                              dates=["storage limit"])),
                ("status", {"past limit": RED, "within 6 months": AMBER})))

    h = ["part", "description", "on hand", "on order", "reorder point", "suggested qty",
         "suggested value", "basis"]
    rows = [[b.part, b.description, b.on_hand, b.on_order, b.reorder_point, b.suggested_qty,
             (b.suggested_qty * b.unit_cost) if b.unit_cost is not None else None, b.basis]
            for b in r.below_reorder]
    out.append((SheetSpec("Below reorder", h, rows, widths={"description": 36, "basis": 36},
                          number_formats=_fmt(h, money=["suggested value"],
                                              qty=["on hand", "on order", "reorder point",
                                                   "suggested qty"])), None))

    h = ["rank", "part", "annual usage value", "share", "cumulative share", "ABC", "XYZ",
         "CV of monthly demand"]
    total = sum((p.annual_usage_value for p in r.parts), Decimal(0))
    rows, run = [], Decimal(0)
    for i, p in enumerate(r.abc_order, start=1):
        run += p.annual_usage_value
        share = float(p.annual_usage_value / total) if total else 0.0
        rows.append([i, p.part, p.annual_usage_value, share,
                     float(run / total) if total else 0.0, p.abc, p.xyz, p.cv])
    out.append((SheetSpec("ABC-XYZ", h, rows, number_formats=_fmt(
        h, money=["annual usage value"], pct=["share", "cumulative share"],
        ratio=["CV of monthly demand"], qty=["rank"])), None))

    h = ["month", "job issues value", "other issues value", "stock value at month end"]
    rows = [[m.label, j, o, s] for m, j, o, s in zip(r.history, r.job_usage_value,
                                                     r.other_usage_value, r.stock_value,
                                                     strict=True)]
    out.append((SheetSpec("Monthly", h, rows, number_formats=_fmt(
        h, money=["job issues value", "other issues value", "stock value at month end"])), None))
    return out


def key_figures(r: MonthReport) -> list[tuple[str, object, str | None]]:
    """(label, value, number format) for the summary, in reading order."""
    t = r.totals
    return [
        ("Stock value at opening", t.opening_value, MONEY),
        ("Receipts", t.receipts_value, MONEY),
        ("Issues to jobs", t.job_issues_value, MONEY),
        ("Other issues", t.other_issues_value, MONEY),
        ("Adjustments", t.adjust_value, MONEY),
        ("Count variances", t.count_value, MONEY),
        ("Stock value at closing", t.closing_value, MONEY),
        ("Jobs in the month", t.jobs, QTY),
        ("Parts on hand", t.parts_on_hand, QTY),
        ("Turns (month, annualised)", t.turns, RATIO),
        ("Turns (last 12 months)", t.turns_12m, RATIO),
        ("Days of supply", t.days_of_supply, DAYS),
        ("Slow stock value (no issue 6 months)", t.slow_value, MONEY),
        ("Dead stock value (no issue 12 months)", t.dead_value, MONEY),
        ("Lots past their storage limit, value", t.expired_value, MONEY),
        ("Lots within 6 months of it, value", t.expiring_soon_value, MONEY),
        ("Count losses, value", t.count_loss_value, MONEY),
        ("Parts at or below their reorder point", len(r.below_reorder), QTY),
    ]


def _summary(ws, fmts: _Formats, r: MonthReport) -> None:
    """Key figures, problems in red, and the ABC x XYZ matrix (charts go beside them)."""
    ws.set_column(0, 0, 40)
    ws.set_column(1, 3, 18)
    # print (and PDF) the summary on one landscape page, charts included
    ws.set_landscape()
    ws.fit_to_pages(1, 1)
    bold = fmts.get(bold=True)
    ws.write_string(0, 0, f"Stock report {r.month.label}", fmts.get(bold=True, size=14))
    ws.write_string(1, 0, f"Valuation: {r.method_label}. Month end "
                          f"{r.month.last_day.isoformat()}; written {r.today.isoformat()}.")
    ws.write_string(3, 0, "Key figure", bold)
    ws.write_string(3, 1, "Value", bold)
    problems = {"Dead stock value (no issue 12 months)": r.totals.dead_value > 0,
                "Lots past their storage limit, value": r.totals.expired_value > 0,
                "Count losses, value": r.totals.count_loss_value < 0}
    row = 4
    for label, value, fmt in key_figures(r):
        ws.write_string(row, 0, label)
        _put(ws, row, 1, _plain(value),
             fmts.get(fmt, RED if problems.get(label) else None, align="right"))
        row += 1
    row += 1
    ws.write_string(row, 0, "ABC x XYZ (parts / usage value)", bold)
    row += 1
    for j, x in enumerate("XYZ", start=1):
        ws.write_string(row, j, x, bold)
    for a in "ABC":
        row += 1
        ws.write_string(row, 0, a, bold)
        for j, x in enumerate("XYZ", start=1):
            cell = [p for p in r.parts if p.abc == a and p.xyz == x]
            value = sum((p.annual_usage_value for p in cell), Decimal(0))
            ws.write_string(row, j, f"{len(cell)} / {value:,.0f}")


def _charts(wb, ws, r: MonthReport) -> None:
    """Usage by month (stacked columns), stock value (line) and the ABC Pareto (columns with
    the cumulative share as a line on a secondary axis), drawn from the sheets' cells."""
    n = len(r.history)
    cats = ["Monthly", 1, 0, n, 0]

    usage = wb.add_chart({"type": "column", "subtype": "stacked"})
    for col in (1, 2):
        usage.add_series({"name": ["Monthly", 0, col], "categories": cats,
                          "values": ["Monthly", 1, col, n, col], "gap": 50})
    usage.set_title({"name": "Usage by month (issues at cost)"})
    usage.set_y_axis({"name": "value", "num_format": "#,##0"})

    stock = wb.add_chart({"type": "line"})
    stock.add_series({"name": ["Monthly", 0, 3], "categories": cats,
                      "values": ["Monthly", 1, 3, n, 3], "smooth": False})
    stock.set_title({"name": "Stock value at month end, last 12 months"})
    stock.set_y_axis({"num_format": "#,##0"})
    stock.set_legend({"none": True})

    k = max(1, min(PARETO_TOP, sum(1 for p in r.parts if p.annual_usage_value > 0)))
    bars = wb.add_chart({"type": "column"})
    bars.add_series({"name": ["ABC-XYZ", 0, 2], "categories": ["ABC-XYZ", 1, 1, k, 1],
                     "values": ["ABC-XYZ", 1, 2, k, 2]})
    bars.set_title({"name": f"ABC Pareto: annual usage value, top {k} parts"})
    bars.set_y_axis({"num_format": "#,##0"})
    cum = wb.add_chart({"type": "line"})
    cum.add_series({"name": ["ABC-XYZ", 0, 4], "categories": ["ABC-XYZ", 1, 1, k, 1],
                    "values": ["ABC-XYZ", 1, 4, k, 4], "y2_axis": True, "smooth": False})
    cum.set_y2_axis({"name": "cumulative share", "num_format": "0%", "min": 0, "max": 1})
    bars.combine(cum)

    for chart, anchor in ((usage, "F2"), (stock, "F20"), (bars, "F38")):
        chart.set_size({"width": 756, "height": 321})  # 20 x 8.5 cm
        ws.insert_chart(anchor, chart)


def write_month_workbook(path: str | Path, r: MonthReport) -> Path:
    """Write the workbook atomically (a reader never sees half a file); returns the path."""
    import xlsxwriter

    path = Path(path)
    with replacing(path) as tmp:
        wb = xlsxwriter.Workbook(str(tmp), {
            "constant_memory": True, "strings_to_formulas": False,
            "strings_to_urls": False, "strings_to_numbers": False,
            "default_date_format": DATE})
        try:
            fmts = _Formats(wb)
            summary = wb.add_worksheet("Summary")
            _summary(summary, fmts, r)
            for spec, rule in _sheets(r):
                _stream_sheet(wb, fmts, spec, rule, negative_red=(
                    ["count variance value"] if spec.name == "Parts" else ()))
            _charts(wb, summary, r)
        finally:
            wb.close()
    return path
