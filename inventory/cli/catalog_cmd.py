"""`inventory catalog ...`: the parts, forks, seats, kits and suppliers in our file layout."""

from __future__ import annotations

from pathlib import Path

import typer

from inventory.cli.common import print_json, reading, say, unit_of_work
from inventory.core.names import CATALOG_TABLES

app = typer.Typer(help="Load and export the catalog (csv folder or xlsx workbook).",
                  no_args_is_help=True)


@app.command()
def load(ctx: typer.Context,
         path: Path = typer.Argument(..., help=f"Folder of csv files or a workbook with sheets "
                                               f"{', '.join(CATALOG_TABLES)}."),
         as_json: bool = typer.Option(False, "--json", help="Print JSON instead of a table.")) -> None:
    """Validate the whole catalog, then write it in one transaction (or write nothing)."""
    from inventory.catalog import service

    with unit_of_work(ctx) as s:
        report = service.load(s, path)
    if as_json:
        print_json(report.to_dict())
        return
    for t in report.tables:
        say(f"{t}: {report.inserted[t]} new, {report.updated[t]} updated")


@app.command()
def export(ctx: typer.Context,
           target: Path = typer.Argument(..., help="A folder (csv files) or a FILE.xlsx.")) -> None:
    """Write the catalog out in the same layout `catalog load` reads."""
    from inventory.catalog import service

    with reading(ctx) as s:
        paths = service.export(s, target)
    for p in paths:
        say(f"wrote {p}")
