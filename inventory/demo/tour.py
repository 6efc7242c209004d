"""The demo tours: a short walk through what the tool does on the demo shop (built by
:mod:`inventory.demo.build`): stock, the bench lookup, the messy-history import, the
forecast, the pre-season plan and the month end.

The tours sit above the features and beside the command line, so they may use its rendering
helpers (tables, the match and fit views); the features themselves never print.
"""

from __future__ import annotations

from datetime import date
from pathlib import Path
from typing import TYPE_CHECKING

from sqlmodel import Session

from inventory.cli.common import print_table, say
from inventory.core.db import make_engine, read_transaction, transaction
from inventory.demo.build import demo_dir
from inventory.stock import service as stock

if TYPE_CHECKING:
    from inventory.monthend.service import MonthEndFiles, ReorderSource


def tour(url: str, reports: str = "reports") -> None:
    """A short walk through what the tool does, on the demo database: stock, the bench
    lookup, the messy-history import, the forecast, the pre-season plan, the month end."""
    from inventory.ordering.service import reorder_source

    Path(reports).mkdir(parents=True, exist_ok=True)
    engine = make_engine(url)
    with Session(engine) as s:
        lines = stock.on_hand(s)
    total = sum(ln.value for ln in lines)
    say(f"\n[bold]1. The demo shop[/bold] is built at {url}: three years of invented history.")
    say(f"Stock on hand: {len(lines)} part/location lines, value {total:,.2f} EUR")
    top = sorted(lines, key=lambda ln: ln.value, reverse=True)[:5]
    print_table("Highest stock value", ["part", "location", "on hand", "value"],
                [[ln.part, ln.location, ln.on_hand, f"{ln.value:,.2f}"] for ln in top],
                right=("on hand", "value"))
    say("\n[bold]2. At the bench[/bold]: a worn seal measured with a caliper.")
    bench_tour(url)
    say("\n[bold]3. A messy history file[/bold] from another system: preview, review, apply.")
    messy_history_tour(url, reports)
    say("\n[bold]4. The next season[/bold]: demand forecast per kit.")
    forecast_tour(url, reports)
    say("\n[bold]5. Before the spring rush[/bold]: the pre-season order plan.")
    plan_tour(url, reports)
    say("\n[bold]6. Closing the month[/bold]: the month-end stock report.")
    files = demo_month_end(url, reports, reorder=reorder_source())
    say(f"Month {files.report.month}: workbook {files.xlsx}, one-page summary {files.html}")
    say("\nSafety: air springs hold pressure; release all air before opening one. A match or "
        "a pass is a suggestion: the technician decides, and the maker's service data and "
        "local rules come first.")
    say(f"Next: inventory --db {url} stock on-hand --json")


def messy_history_tour(url: str, reports: str) -> None:
    """Preview the demo's messy history workbook (odd headers, free-text fork names, day-first
    dates), answer the review workbook, apply, and show that a re-run changes nothing; then
    preview the broken variant, which lists every bad cell and writes nothing."""
    from inventory.history.service import ImportSettings, answer_review_with_best, import_file

    folder = demo_dir()
    messy = folder / "messy_history.xlsx"
    review = Path(reports) / "messy_history.review.xlsx"
    engine = make_engine(url)
    with Session(engine) as s:
        rep = import_file(s, messy, ImportSettings(kind="history", review=review), apply=False)
    held = [f.text for f in rep.forks if f.how == "review"]
    say(f"Preview of {messy.name}: {rep.rows} rows, header on row {rep.header_row}, "
        f"dates {rep.dates}; {len(held)} fork names need a person: {', '.join(held)}")
    say(f"Review workbook with candidates in drop-down lists: {rep.review_path}")
    answer_review_with_best(review)  # the tour takes the best candidate, as a person might
    with transaction(engine) as s:
        rep = import_file(s, messy, ImportSettings(kind="history", resolutions=review),
                          apply=True)
    say(f"Applied with the answers: {rep.new} new job(s) as import batch {rep.batch_id}; "
        "the answers are remembered for next time.")
    with transaction(engine) as s:
        rep = import_file(s, messy, ImportSettings(kind="history"), apply=True)
    say(f"Re-run: {rep.new} new, {rep.already} already applied: nothing written.")
    with Session(engine) as s:
        rep = import_file(s, folder / "messy_history_broken.xlsx", ImportSettings(kind="history"),
                          apply=False)
    say(f"A broken copy: {len(rep.problems)} problems, each at its cell, nothing written, e.g.")
    for p in rep.problems[:3]:
        say(f"  {p}")


# -- at the bench ---------------------------------------------------------------------------------

#: How a worn ring reads under the caliper in the tour: the inside a little stretched and
#: swollen, the section a little flattened by compression set (illustrative, common
#: practice for a used static seal).
WORN_ID_FACTOR = 1.005
WORN_CS_FACTOR = 0.985


def bench_tour(url: str) -> None:
    """For the demo tour: caliper readings of a worn O-ring from a demo seat (oil-wetted
    where one fits), the ranked match (stock and standard sizes) with verdicts for that
    seat, and the full fit of the stocked ring that came out of it."""
    from inventory.bench import service as svc
    from inventory.bench.service import MatchQuery, fit
    from inventory.cli.bench_cmd import render_fit, render_match
    from inventory.core.convert import all_seats
    from inventory.core.model import PartKind

    with read_transaction(make_engine(url)) as s:  # stock is read per part asked for
        shop = svc.load_shop(s)
        seats = all_seats(s)
        rings = [p for p in shop.parts if PartKind(p.kind) == PartKind.O_RING
                 and p.standard and p.id_mm and p.cs_mm and shop.stock_of(p.code).on_hand > 0]
    rings.sort(key=lambda p: (p.standard != "AS568-214", p.material != "NBR", p.code))
    # an oil-wetted seat shows the material rule too (EPDM never goes in oil)
    seats.sort(key=lambda x: (str(x.medium) != "oil", x.fork, x.seat))
    # a ring that passes over its tolerances where there is one, else a marginal one (the
    # fit table then shows which extreme drives the verdict)
    chosen = None
    marginal = None
    for ring in rings:
        for seat in seats:
            if PartKind(seat.part_kind) != PartKind.O_RING:
                continue
            verdict = str(fit(ring, seat).verdict)
            if verdict == "pass":
                chosen = ring, seat
                break
            if verdict == "marginal" and marginal is None:
                marginal = ring, seat
        if chosen:
            break
    chosen = chosen or marginal
    if chosen is None:
        say("bench lookup: no stocked standard O-ring fits a demo seat; skipped")
        return
    ring, seat = chosen
    read_id = round(ring.id_mm * WORN_ID_FACTOR, 2)
    read_cs = round(ring.cs_mm * WORN_CS_FACTOR, 2)
    say(f"[bold]At the bench[/bold]: a worn O-ring out of {seat.fork} {seat.seat} reads "
        f"{read_id:.2f} x {read_cs:.2f} mm on the caliper.")
    say(f"$ inventory match --id {read_id:.2f} --cs {read_cs:.2f} --fork {seat.fork} "
        f"--seat {seat.seat} --limit 4")
    request = svc.MatchRequest(MatchQuery(id_mm=read_id, cs_mm=read_cs, kind=PartKind.O_RING),
                               limit=4, seat=seat)
    result = svc.run_match(shop, request)
    render_match(result, "mm")
    say(f"$ inventory fit {ring.code} --fork {seat.fork} --seat {seat.seat}")
    render_fit(fit(ring, seat))


# -- forecast, plan, month end --------------------------------------------------------------------


def forecast_tour(url: str, reports_dir: str | Path = "reports", *,
                  today: date | None = None) -> None:
    """The demo shop's next season: kit forecast per month from the day after the history
    (the demo's "today", 2026-12-02), a short table, and where the workbook and charts went."""
    from inventory.cli.forecast_cmd import render_table
    from inventory.forecast.service import ForecastRequest, forecast_items, write_outputs

    day = today or date(2026, 12, 2)
    engine = make_engine(url)
    with Session(engine) as s:
        report = forecast_items(s, ForecastRequest(today=day, horizon=7, by="kit"))
        parts = forecast_items(s, ForecastRequest(today=day, horizon=7, by="part"))
    say(f"[bold]Next season's demand[/bold] from {day.isoformat()} "
        "(kits per month, with the 10-90 % range over lead time + review)")
    render_table(report, 8)
    top = report.chosen(4)
    written = write_outputs(report, top, xlsx=None, charts=None, defaults=True,
                            reports_dir=reports_dir)
    written += write_outputs(parts, parts.chosen(4), xlsx=None, charts=None, defaults=True,
                             reports_dir=reports_dir)
    peak = max(range(report.horizon), key=lambda j: sum(x.forecast[j] for x in report.series))
    total = sum(sum(x.forecast) for x in report.series)
    say(f"Kits over the next {report.horizon} months: {total:.0f}, peak in "
        f"{report.forecast_periods[peak].strftime('%B %Y')}; seals (kits exploded): "
        f"{len(parts.series)} part series")
    for p in written:
        if p.suffix == ".xlsx":
            say(f"wrote {p}")
    charts = [p for p in written if p.suffix == ".png"]
    if charts:
        say(f"wrote {len(charts)} charts to {charts[0].parent}")
    say(f"Try: inventory --db {url} forecast --by part --part DW-34-45")


def plan_tour(url: str, reports_dir: str | Path) -> None:
    """The demo shop's pre-season plan (season start 2027-03-01, planned on the demo's
    "today", 2026-12-02): writes ``preseason_plan.xlsx`` and ``preseason_plan.json`` to
    ``reports_dir`` and prints a short summary."""
    import json

    from inventory.ordering.service import PlanSpec, make_plan, plan_to_dict, write_plan_workbook

    out = Path(reports_dir)
    out.mkdir(parents=True, exist_ok=True)
    with Session(make_engine(url)) as s:
        plan = make_plan(s, PlanSpec(date(2026, 12, 2), season_start=date(2027, 3, 1)))
    xlsx = write_plan_workbook(plan, out / "preseason_plan.xlsx")
    (out / "preseason_plan.json").write_text(
        json.dumps(plan_to_dict(plan), indent=2, ensure_ascii=False) + "\n", encoding="utf-8")
    say(f"[bold]Pre-season plan[/bold] for a season starting {plan.season_start}: "
        f"{sum(len(o.lines) for o in plan.orders)} lines, total {plan.total:,.2f}")
    print_table("Purchase orders", ["supplier", "order by", "delivery", "lines", "total", "note"],
                [[o.supplier, o.order_by, o.arrival, len(o.lines), f"{o.total:,.2f}",
                  o.note] for o in plan.orders], right=("lines", "total"))
    say(f"Expected fill {plan.expected_fill:.1%} against a target of {plan.service_target:.1%}; "
        f"{len(plan.uncovered)} item(s) not fully covered; workbook {xlsx}")


def demo_month_end(url: str, reports: str | Path = "reports", *, today: date | None = None,
                   reorder: ReorderSource | None = None) -> MonthEndFiles:
    """For the demo tour: the workbook and the HTML page for the demo's last complete month,
    written to ``reports/stock-YYYY-MM.xlsx`` and ``.html``."""
    from inventory.monthend.service import default_xlsx, latest_complete_month, write_month_end

    today = today or date.today()
    with Session(make_engine(url)) as s:
        month = latest_complete_month(s, today)
        base = default_xlsx(month, reports)
        return write_month_end(s, month, today=today, xlsx=base, html=base.with_suffix(".html"),
                               reorder=reorder)
