"""`inventory month close|reopen|list`: the manager closes a month's books."""

from __future__ import annotations

from datetime import date

import typer

from inventory.cli import options
from inventory.cli.common import print_json, print_table, reading, say, unit_of_work

app = typer.Typer(help="Close a month's books (no movement may be dated in it afterwards), "
                       "reopen the latest closed month with a reason, list the acts.",
                  no_args_is_help=True)


def _today(text: str | None) -> date:
    return options.day(text, "--today") or date.today()


@app.command("close")
def close(ctx: typer.Context,
          month: str = typer.Argument(..., metavar="YYYY-MM", help="A complete month."),
          today: str = typer.Option(None, "--today", hidden=True,
                                    help="Take this day as today (for tests)."),
          ) -> None:
    """Close a month: its report totals are stored, and nothing dated up to its last day may
    be booked afterwards (corrections go in the first open month)."""
    from inventory.monthend import service

    with unit_of_work(ctx) as s:
        done = service.close_month(s, month, today=_today(today))
    t = done.totals
    say(f"closed {done.month}: closing value {t['closing_value']}, receipts "
        f"{t['receipts_value']}, issues {t['job_issues_value']} to jobs and "
        f"{t['other_issues_value']} other; the books are closed through {done.month}")


@app.command("reopen")
def reopen(ctx: typer.Context,
           month: str = typer.Argument(..., metavar="YYYY-MM", help="The latest closed month."),
           reason: str = typer.Option(..., "--reason", help="Why it is reopened (recorded)."),
           ) -> None:
    """Reopen the latest closed month; the act, who did it and why stay on record."""
    from inventory.monthend import service

    with unit_of_work(ctx) as s:
        label = service.reopen_month(s, month, reason=reason)
    say(f"reopened {label} (recorded with its reason)")


@app.command("list")
def list_acts(ctx: typer.Context,
              as_json: bool = typer.Option(False, "--json", help="Print JSON."),
              ) -> None:
    """Every close and reopen, oldest first."""
    from inventory.monthend import service

    with reading(ctx) as s:
        rows = service.month_acts(s)
    if as_json:
        print_json(rows)
        return
    print_table("Month closes", ["month", "act", "when (UTC)", "by", "reason"],
                [[r["month"], r["action"], f"{r['ts']:%Y-%m-%d %H:%M}", r["user"] or "",
                  r["reason"]] for r in rows])
