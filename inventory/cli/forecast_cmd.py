"""``inventory forecast`` and ``inventory backtest``; :func:`inventory.demo.tour.forecast_tour`
shows the demo shop's next season.

Thin commands: parse, call one library function (:func:`inventory.forecast.service.
forecast_items`, :func:`inventory.ordering.backtest.run_backtest`), render a table or ``--json``,
write the workbook and charts.
"""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from datetime import date
from pathlib import Path
from typing import TYPE_CHECKING, Any

import typer
from rich.console import Console
from rich.table import Table

from inventory.cli import options
from inventory.cli.common import console, err_console, print_json, print_table, reading, say
from inventory.core.choices import DEFAULT_ALLOCATION, Allocation, ForecastBy

if TYPE_CHECKING:  # the forecaster loads scipy: imported when a command runs, not at start-up
    from inventory.forecast.service import By, ForecastReport

BY_CHOICES = tuple(ForecastBy)
ALLOCATIONS = tuple(Allocation)
FORECAST_STEPS = 6


# -- progress ---------------------------------------------------------------------------------


@contextmanager
def _progress(total: int | None, label: str, *, quiet: bool) -> Iterator[Any]:
    """A transient progress bar on stderr; silent for ``--json`` or when not a terminal."""
    from rich.progress import BarColumn, Progress, SpinnerColumn, TextColumn, TimeElapsedColumn

    bar = Progress(SpinnerColumn(), TextColumn("{task.description}"), BarColumn(),
                   TimeElapsedColumn(), console=err_console, transient=True,
                   disable=quiet or not err_console.is_terminal)
    with bar:
        task = bar.add_task(label, total=total)

        def step(msg: str) -> None:
            bar.update(task, description=msg, advance=1)

        yield step


# -- forecast ------------------------------------------------------------------------------------


def _day(text: str | None, what: str = "--today") -> date:
    """The forecast's day (:func:`inventory.core.parse.day`); today when not given."""
    return options.day(text, what) or date.today()


def _label(report: ForecastReport, d: date) -> str:
    return d.strftime("%b %y") if report.freq == "M" else d.strftime("%d %b")


def _fmt(x: float) -> str:
    return f"{x:.1f}" if x < 100 else f"{x:.0f}"


def render_table(report: ForecastReport, rows: int, codes: tuple[str, ...] = ()) -> None:
    """The readable table: the top ``rows`` series by usage value (and any asked)."""
    ranked = sorted(report.series, key=lambda s: (-s.usage_value, s.code))
    shown = ranked[:rows] + [s for s in report.chosen(0, codes) if s not in ranked[:rows]]
    unit = "month" if report.freq == "M" else "week"
    periods = [_label(report, d) for d in report.forecast_periods]
    q_lo, q_hi = (round(100 * q) for q in report.quantiles)
    cover = f"{report.cover_periods:.3g} {unit}s"
    # a pipe or file gets the whole table; a terminal gets its own width, and on a narrow
    # one the codes and totals stay whole: the later months and then the method phrase go
    # first (they are in the workbook and --json)
    out = console if console.is_terminal else Console(width=200, highlight=False)
    code_w = max([len("code"), *(len(s.code) for s in shown)])
    cost = 3  # a column's borders and padding
    fixed = (code_w + cost) + (4 + cost) + (8 + cost) + (9 + cost) + 1
    room = out.width - fixed
    phrase_w = max([len("how it is forecast"), *(len(s.phrase) for s in shown)])
    n_periods = len(periods)
    show_phrase = True
    while n_periods and room < n_periods * (6 + cost) + (phrase_w + cost) * show_phrase:
        if n_periods > 3 or not show_phrase:
            n_periods -= 1
        else:
            show_phrase = False
    if room < (phrase_w + cost) * show_phrase:
        show_phrase = False
    header = ["code", "unit", *(["how it is forecast"] if show_phrase else []),
              *periods[:n_periods],
              f"total over {cover} (lead time + review)", f"{q_lo}-{q_hi} % range of that total"]
    body = [[s.code, s.unit, *([s.phrase] if show_phrase else []),
             *[_fmt(x) for x in s.forecast[:n_periods]], _fmt(s.cover_mean),
             f"{s.cover_low}-{s.cover_high}"] for s in shown]
    left = len(report.series) - len(shown)
    caption = (f"{len(shown)} of {len(report.series)} series by usage value"
               + (f"; {left} more in the workbook or --json" if left > 0 else ""))
    if n_periods < len(periods) or not show_phrase:
        caption += ("; narrow terminal: " + ", ".join(
            ([f"{len(periods) - n_periods} later {unit}s"] if n_periods < len(periods) else [])
            + ([] if show_phrase else ["the method"])) + " left out (in --json and the workbook)")
    table = Table(title=f"Forecast by {report.by}, per {unit} in each part's unit, from "
                        f"{report.today.isoformat()}", caption=caption, header_style="bold")
    texts = 3 if show_phrase else 2
    for i, h in enumerate(header):
        table.add_column(h, justify="left" if i < texts else "right",
                         no_wrap=i < texts or i < len(header) - 2,
                         min_width=code_w if i == 0 else None)
    for row in body:
        table.add_row(*[str(v) for v in row])
    out.print(table)
    say(f"Season: {report.season.reason}")
    ibi = report.installed_base
    if ibi is not None:
        say(f"Installed base: {ibi.reason}; {ibi.forks} forks, return probability "
            f"{ibi.return_probability:.2f}, median {ibi.hours_per_week:.1f} ride h/week")
    if report.class_choice:
        say("Methods per class (technical; also in --json and the workbook): "
            + ", ".join(f"{c} {m}" for c, m in
                                             sorted(report.class_choice.items())))
    else:
        say("Methods: too little history to choose by backtest; one method for all")


def forecast(
    ctx: typer.Context,
    horizon: int = typer.Option(6, "--horizon", min=1, max=36,
                                help="Periods to forecast (months, or weeks with --weekly)."),
    by: ForecastBy = typer.Option(ForecastBy.PART, "--by", case_sensitive=False,
                                  help="part (kits exploded into their seals), kit, "
                                                "family (jobs per fork family) or item "
                                                "(stock items as they leave the shelf)."),
    weekly: bool = typer.Option(False, "--weekly", help="Weekly periods (ISO weeks)."),
    xlsx: Path = typer.Option(None, "--xlsx", help="Workbook to write (default "
                                                   "reports/forecast-BY-YYYY-MM.xlsx; with "
                                                   "--json only when given)."),
    charts: Path = typer.Option(None, "--charts", help="Folder for the PNG charts (default "
                                                       "reports; with --json only when "
                                                       "given)."),
    top: int = typer.Option(6, "--top", min=0, help="Chart the top N series by usage value."),
    parts: list[str] = typer.Option([], "--part", help="Also chart (and list) this series; "
                                                       "repeatable."),
    rows: int = typer.Option(20, "--rows", min=1, help="Series in the table."),
    lead_time: float = typer.Option(1.0, "--lead-time", min=0.0,
                                    help="Lead time in months, for the range over the cover."),
    review: float = typer.Option(1.0, "--review", min=0.01, help="Review period in months."),
    as_json: bool = typer.Option(False, "--json", help="Print every series as JSON."),
    today: str = typer.Option(None, "--today", help="Forecast from this day (default today)."),
) -> None:
    """Forecast demand per part, kit or fork family, with a range, a workbook and charts."""
    from inventory.forecast import service  # scipy, openpyxl, matplotlib: only when it runs

    day = _day(today)
    lead_time = options.number(lead_time, "--lead-time", low=0.0, high=36.0)
    review = options.number(review, "--review", low=0.01, high=36.0)
    by_: By = by.value  # type: ignore[assignment]
    with _progress(FORECAST_STEPS + 2, "forecast", quiet=as_json) as step, reading(ctx) as s:
        report, _, written = service.forecast_command(
            s, service.ForecastRequest(today=day, horizon=horizon, by=by_,
                                       freq="W" if weekly else "M",
                                       lead_time_months=lead_time, review_months=review),
            service.ForecastFiles(top=top, parts=tuple(parts), xlsx=xlsx, charts=charts,
                                  defaults=not as_json), step=step)
    if as_json:
        data = report.to_dict()
        data["files"] = [str(p) for p in written]
        print_json(data)
        return
    render_table(report, rows, tuple(parts))
    for p in written:
        say(f"wrote {p}")


# -- backtest ------------------------------------------------------------------------------------


def backtest(
    ctx: typer.Context,
    file: Path = typer.Argument(..., metavar="FILE.csv",
                                help="Demand history: wide (month, one column per part) or "
                                     "long (date, part, qty)."),
    horizon: int = typer.Option(6, "--horizon", help="Test months at the end."),
    lead_time: int = typer.Option(1, "--lead-time", help="Lead time in months."),
    fill_rate: str = typer.Option("0.95", "--fill-rate",
                                  help="Asked fill rate (0.5-0.999, or 50-99.9 %)."),
    review: int = typer.Option(1, "--review", help="Review period in months."),
    rolling: bool = typer.Option(False, "--rolling", help="Rolling origins, pooled."),
    origins: int = typer.Option(3, "--origins", help="Origins in rolling mode."),
    allocation: Allocation = typer.Option(DEFAULT_ALLOCATION, "--allocation",
                                          case_sensitive=False,
                                   help="uniform: one per-part target set so the POOLED fill "
                                        "meets the asked rate (default); part: each part's "
                                        "own target; marginal: least stock for the pooled "
                                        "target."),
    as_json: bool = typer.Option(False, "--json", help="Print the result as JSON."),
) -> None:
    """Backtest forecast + order-up-to policy on a demand history outside the database."""
    from inventory.ordering import service  # scipy: only when it runs

    rate = options.fill_rate(fill_rate, "--fill-rate")
    with _progress(None, f"backtesting {file.name}", quiet=as_json):
        setup = service.BacktestSetup(horizon=horizon, lead_time=lead_time,
                                      review_period=review, allocation=allocation.value)
        data = service.backtest_file(file, setup, fill_rate=rate, rolling=rolling,
                                     origins=origins)
    if as_json:
        print_json(data)
        return
    render_backtest(data)


def render_backtest(d: dict) -> None:
    def pct(x: float | None) -> str:
        return "" if x is None else f"{100 * x:.1f} %"

    def num(x: float | None, f: str = ".3f") -> str:
        return "" if x is None else format(x, f)

    mode = f"rolling, origins {d['origins']}" if d.get("rolling") else "one origin"
    print_table(f"Backtest of {d['file']} ({mode})", ["measure", "value"], [
        ["series", d["series"]],
        ["horizon / lead time / review", f"{d['horizon']} / {d['lead_time']} / "
                                         f"{d['review_period']} months"],
        ["asked fill rate", f"{pct(d['fill_target'])} ({d['allocation']})"],
        ["achieved pooled fill rate", pct(d["fill_rate"])],
        ["fill rate asked of the policy (calibrated in training)"
         if d.get("fill_calibration") else "fill rate the model expected",
         pct(d["asked_policy"] if d.get("fill_calibration") else d["expected_fill"])],
        ["series with no stockout", pct(d["no_stockout"])],
        ["average on hand per series per month", num(d["avg_on_hand"], ".2f")],
        ["RMSSE", num(d["rmsse"], ".4f")],
        ["MASE", num(d["mase"], ".4f")],
        ["bias (scaled)", num(d["bias"], "+.4f")],
        ["error of the total (scaled)", num(d["total_error"], ".4f")],
        ["seconds (fit + levels + simulation)", num(d["seconds"], ".2f")],
    ], right=("value",))
    if d.get("classes"):
        say("Classes: " + ", ".join(f"{c} {k}" for c, k in sorted(d["classes"].items()))
            + "; methods: " + ", ".join(f"{c} {m}" for c, m in
                                        sorted(d.get("class_choice", {}).items())))
    if d.get("by_abc"):
        print_table("Promised vs achieved fill per ABC class (units, last 12 training months)",
                    ["class", "series", "promised", "achieved", "model expected"],
                    [[c, int(r["series"]), pct(d["fill_target"]), pct(r["fill"]),
                      pct(r["expected"])] for c, r in sorted(d["by_abc"].items())],
                    right=("series", "promised", "achieved", "model expected"))
    if d.get("calibration"):
        say("Calibration (share of test windows at or below the model's quantile): "
            + ", ".join(f"{k} {100 * v:.0f} %" for k, v in d["calibration"].items()
                        if v is not None))


def register(app: typer.Typer) -> None:
    """Add ``forecast`` and ``backtest`` to the main command."""
    app.command("forecast")(forecast)
    app.command("backtest")(backtest)
