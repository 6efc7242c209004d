"""`inventory report month YYYY-MM`: the month-end stock report."""

from __future__ import annotations

from datetime import date
from pathlib import Path

import typer

from inventory.cli import options
from inventory.cli.common import print_json, print_table, reading, say
from inventory.core.choices import DEFAULT_VALUATION, Valuation

app = typer.Typer(help="Month-end reports.", no_args_is_help=True)


def _today(text: str | None) -> date:
    return options.day(text, "--today") or date.today()


@app.command("month")
def month(ctx: typer.Context,
          month: str = typer.Argument(..., metavar="YYYY-MM", help="A complete month."),
          xlsx: Path = typer.Option(None, "--xlsx",
                                    help="Workbook to write (default reports/stock-YYYY-MM.xlsx; "
                                         "with --json only when given)."),
          html: Path = typer.Option(None, "--html", help="Also write a one-page HTML summary."),
          as_json: bool = typer.Option(False, "--json", help="Print the report as JSON."),
          method: Valuation = typer.Option(DEFAULT_VALUATION, "--method", case_sensitive=False,
                                     help="Valuation: fifo (lot cost, oldest cure first) or "
                                          "average (moving average)."),
          plan: bool = typer.Option(True, "--plan/--no-plan",
                                    help="Reorder list from the order planner (default) or "
                                         "from the simple usage rule only."),
          today: str = typer.Option(None, "--today", hidden=True,
                                    help="Take this day as today (for tests)."),
          ) -> None:
    """Stock value, usage, turns, classes, dead stock, count variances, expiring lots and the
    reorder list for one month; refuses if the ledger does not reconcile."""
    from inventory.monthend import service  # loads the report writers: only when it runs

    day = _today(today)
    with reading(ctx) as s:
        files = service.month_end(s, month, today=day,
                                  outputs=service.Outputs(xlsx, html, default_workbook=not as_json),
                                  method=method.value, plan=plan)
    if as_json:
        print_json(service.report_json(files))
        return
    m = files.report.month
    t = files.report.totals
    print_table(f"Stock report {m.label} ({files.report.method_label})", ["figure", "value"], [
        ["opening value", f"{t.opening_value:,.2f}"],
        ["receipts", f"{t.receipts_value:,.2f}"],
        ["issues", f"{t.issues_value:,.2f}"],
        ["adjustments and counts", f"{t.adjustments_value:+,.2f}"],
        ["closing value", f"{t.closing_value:,.2f}"],
        ["dead / slow stock", f"{t.dead_value:,.2f} / {t.slow_value:,.2f}"],
        ["lots past storage limit", f"{t.expired_value:,.2f}"],
        ["parts to reorder", str(len(files.report.below_reorder))],
    ], right=("value",))
    for p in (files.xlsx, files.html):
        if p is not None:
            say(f"wrote {p}")
