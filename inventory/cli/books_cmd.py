"""`inventory check` and `inventory backup FILE`: can the books be trusted, and a copy."""

from __future__ import annotations

from datetime import date
from pathlib import Path

import typer

from inventory.cli.common import err_console, reading, say, state


def check(ctx: typer.Context) -> None:
    """Check the books: cached balances equal the ledger's sums, no lot below zero on any day,
    foreign keys, SQLite integrity, closed months equal their snapshots. One line per
    problem; exit 1 when there is any."""
    from inventory.monthend import service

    with reading(ctx) as s:
        problems = service.check_books(s, today=date.today())
    for line in problems:
        err_console.print(f"problem: {line}", markup=False, highlight=False, soft_wrap=True)
    if problems:
        raise typer.Exit(1)
    say("books check out: balances equal the ledger, no lot below zero on any day, "
        "closed months unchanged")


def backup(ctx: typer.Context,
           file: Path = typer.Argument(..., help="Where to write the copy (a new file)."),
           replace: bool = typer.Option(False, "--replace", help="Overwrite FILE if it exists."),
           ) -> None:
    """A consistent copy of the SQLite database while others keep working (PostgreSQL: use
    pg_dump, see the README)."""
    from inventory.core.backup import backup_sqlite

    out = backup_sqlite(state(ctx).url, file, replace=replace)
    say(f"backed up to {out}")


def register(app: typer.Typer) -> None:
    app.command("check")(check)
    app.command("backup")(backup)
