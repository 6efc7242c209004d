"""`inventory import`, `inventory export` and `inventory template`: the shop's spreadsheets
in and out."""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

import typer

from inventory.cli.common import console, print_json, print_table, reading, unit_of_work
from inventory.core.errors import InventoryError, Problem
from inventory.core.names import EXPORT_TABLES as TABLES
from inventory.core.names import IMPORT_KINDS as KINDS

if TYPE_CHECKING:
    from inventory.history.service import ImportReport

ORDERS = {"dmy": "dmy", "day-first": "dmy", "dayfirst": "dmy", "mdy": "mdy",
          "month-first": "mdy", "monthfirst": "mdy"}
SHOWN_WARNINGS = 15



def say(text: str) -> None:
    """A line for people, never wrapped (paths and commands stay copyable)."""
    console.print(text, highlight=False, soft_wrap=True)

def parse_maps(maps: list[str]) -> tuple[tuple[str, str], ...]:
    out = []
    for m in maps:
        header, sep, target = m.rpartition("=")
        if not sep or not header.strip() or not target.strip():
            raise InventoryError(f"bad --map {m!r}: expected HEADER=FIELD, e.g. "
                                 "--map \"Job No.=job\"")
        out.append((header.strip(), target.strip()))
    return tuple(out)


def import_file(
    ctx: typer.Context,
    kind: str = typer.Argument(..., help=f"What the file holds: {', '.join(KINDS)}."),
    file: Path = typer.Argument(..., help="A .xlsx or .csv file."),
    sheet: str = typer.Option(None, "--sheet", help="Sheet to read (default: the one whose "
                                                    "headers fit best)."),
    maps: list[str] = typer.Option([], "--map", help="HEADER=FIELD: read this column as our "
                                                     "field (FIELD - ignores it). Repeatable."),
    resolutions: Path = typer.Option(None, "--resolutions",
                                     help="The filled-in review workbook with fork decisions."),
    review: Path = typer.Option(None, "--review", help="Where to write the review workbook "
                                                       "(default FILE.review.xlsx beside FILE)."),
    date_order: str = typer.Option(None, "--date-order",
                                   help="dmy or mdy, when the file cannot tell on its own."),
    no_stock: bool = typer.Option(False, "--no-stock",
                                  help="history: record the jobs without taking stock (jobs "
                                       "from before the ledger started)."),
    stock_before_ledger: bool = typer.Option(
        False, "--stock-before-ledger",
        help="history: jobs dated before the ledger's first movement take stock too (by "
             "default they record usage only)."),
    apply: bool = typer.Option(False, "--apply", help="Write it (default: preview only)."),
    as_json: bool = typer.Option(False, "--json", help="Print the report as JSON."),
) -> None:
    """Import a spreadsheet: preview by default; --apply writes all of it or nothing.

    Headers match by name, alias or similarity; --map overrides.

    Every problem is listed at once as file:sheet!cell, with the value and what was expected.

    Fork models typed as free text that cannot be resolved go to a review workbook.

    Fill it in and pass it back with --resolutions.

    Re-importing rows already applied changes nothing.
    """
    from inventory.history import service

    if kind not in KINDS:
        raise InventoryError(f"unknown import kind {kind!r}", hint=f"use one of {', '.join(KINDS)}")
    order = None
    if date_order:
        order = ORDERS.get(date_order.strip().lower())
        if order is None:
            raise InventoryError(f"bad --date-order {date_order!r}: expected dmy or mdy")
    settings = service.ImportSettings(kind=kind, sheet=sheet, mapping=parse_maps(maps),
                                      resolutions=resolutions, review=review,
                                      date_order=order, stock=not no_stock,
                                      stock_before_ledger=stock_before_ledger)
    if resolutions is not None and not resolutions.exists():
        raise InventoryError(f"{resolutions}: no such file", hint="give the review workbook "
                             "written by the preview")
    if apply:
        try:
            with unit_of_work(ctx) as s:
                rep = service.import_file(s, file, settings, apply=True)
        except InventoryError as exc:
            failed = getattr(exc, "report", None)
            if failed is not None:
                _render(failed, as_json, "not applied")
            raise
        _render(rep, as_json, "applied" if rep.applied else "nothing new")
        return
    with reading(ctx) as s:
        rep = service.import_file(s, file, settings, apply=False)
    _render(rep, as_json, "preview")
    if not rep.ok:
        raise rep.error()


def _render(rep: ImportReport, as_json: bool, state: str) -> None:
    if as_json:
        print_json(rep.to_dict() | {"state": state})
        return
    where = rep.file + (f", sheet {rep.sheet!r}" if rep.sheet else "")
    say(f"[bold]{rep.kind} import of {where}[/bold] (header on row {rep.header_row}) - {state}")
    print_table("Columns", ["field", "header in the file", "matched by"],
                [[m.field, m.header, m.how + (f" {m.score:.0f}" if m.how == "fuzzy" else "")]
                 for m in rep.mapping])
    if rep.ignored:
        say(f"ignored columns: {', '.join(repr(h) for h in rep.ignored)}")
    if rep.dates:
        say(f"dates: {rep.dates}" + (" (1904 date system)" if rep.date1904 else ""))
    if rep.forks:
        print_table("Fork models", ["text in the file", "fork family", "how", "score", "rows"],
                    [[f.text, f.code or "?", f.how, f"{f.score:.0f}", f.rows]
                     for f in rep.forks], right=("score", "rows"))
    unit = rep.unit
    say(f"rows read: {rep.rows}; {unit}s: {rep.new} new, {rep.already} already applied, "
        f"{rep.invalid} invalid" + (f", {rep.review} need review" if rep.review else ""))
    if rep.effects:
        say("effects: " + ", ".join(f"{k} {v}" for k, v in rep.effects.items()))
    _warnings(rep.warnings)
    if rep.review_path and rep.review:
        say(f"review workbook: {rep.review_path} - choose a fork family for each text, save, "
            f"and run again with --resolutions {rep.review_path}")
    if state == "preview":
        say("preview only: nothing was written" + (" - run again with --apply to write it"
                                                   if rep.ok and rep.new else ""))
    elif state == "applied":
        say(f"applied as batch {rep.batch_id}: {rep.new} {unit}(s)")
    elif state == "nothing new":
        prev = ", ".join(f"batch {p['batch']} on {p['applied_at'][:10]}" for p in rep.previous)
        say(f"nothing new: all {rep.already} {unit}(s) were applied before"
            + (f" (this file: {prev})" if prev else "") + "; nothing changed")


def _warnings(warnings: list[Problem]) -> None:
    for w in warnings[:SHOWN_WARNINGS]:
        console.print(f"warning: {w}", markup=False, highlight=False, soft_wrap=True)
    if len(warnings) > SHOWN_WARNINGS:
        say(f"... and {len(warnings) - SHOWN_WARNINGS} more warning(s) (see --json)")


def export(ctx: typer.Context,
           table: str = typer.Argument(..., help=f"One of {', '.join(TABLES)}."),
           xlsx: Path = typer.Option(None, "--xlsx", help="Write a styled workbook."),
           csv: Path = typer.Option(None, "--csv", help="Write a csv file (UTF-8)."),
           ) -> None:
    """Export a table to xlsx or csv (jobs in the layout `import history` reads)."""
    from inventory.history import service

    if (xlsx is None) == (csv is None):
        raise InventoryError("give exactly one of --xlsx FILE or --csv FILE")
    with reading(ctx) as s:
        path, n = service.export_table(s, table, xlsx or csv, fmt="xlsx" if xlsx else "csv")
    say(f"wrote {path} ({n} row(s))")


def template(ctx: typer.Context,
             kind: str = typer.Argument(..., help=f"One of {', '.join(KINDS)}."),
             xlsx: Path = typer.Option(..., "--xlsx", help="The workbook to write."),
             ) -> None:
    """Write an empty import template with drop-down lists and an example row."""
    from inventory.history import service

    with reading(ctx) as s:
        path = service.write_template(s, kind, xlsx)
    say(f"wrote {path}: fill in the {kind!r} sheet (the 'example' sheet shows one row), then "
        f"`inventory import {kind} {path.name}`")
