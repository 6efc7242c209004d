"""The ``inventory`` command: global options, sub-commands, and the one error handler that
turns every known failure into a line on stderr and a non-zero exit."""

from __future__ import annotations

import sys
import traceback

import typer

from inventory.cli import (
    bench_cmd,
    catalog_cmd,
    forecast_cmd,
    io_cmd,
    jobs_cmd,
    plan_cmd,
    report_cmd,
    stock,
    users_cmd,
)
from inventory.cli.common import AppState, err_console, say, state
from inventory.core.errors import InventoryError

app = typer.Typer(
    name="inventory",
    help="Seal and parts planner for suspension service shops.",
    no_args_is_help=True,
    add_completion=False,
    pretty_exceptions_enable=False,
)


@app.callback()
def main(ctx: typer.Context,
         db: str = typer.Option(None, "--db", envvar="INVENTORY_DB",
                                help="Database URL or SQLite file (default inventory.db here)."),
         debug: bool = typer.Option(False, "--debug", help="Show tracebacks.")) -> None:
    ctx.obj = AppState(db=db, debug=debug)


@app.command()
def init(ctx: typer.Context) -> None:
    """Create the database, or upgrade it to this version's schema."""
    from inventory.cli.common import engine
    from inventory.core import migrate

    eng = engine(ctx, check_schema=False)
    before = migrate.current_revision(eng)
    migrate.upgrade(eng)
    after = migrate.current_revision(eng)
    url = eng.url.render_as_string(hide_password=True)
    if before == after:
        say(f"{url}: schema already at {after}")
    else:
        say(f"{url}: schema {before or 'empty'} -> {after}")


@app.command()
def demo(ctx: typer.Context,
         db: str = typer.Option("demo.db", "--db", help="Where to build the demo database."),
         reports: str = typer.Option("reports", "--reports", help="Folder for reports."),
         quick: bool = typer.Option(False, "--quick", help="Build only, no tour.")) -> None:
    """Build a fresh demo shop database from catalog_demo and show what the tool does."""
    from inventory.demo.build import build_demo, tour

    url = build_demo(db)
    if not quick:
        tour(url, reports)


app.add_typer(catalog_cmd.app, name="catalog")
app.add_typer(stock.app, name="stock")
bench_cmd.register(app)  # match, fit, compat, parts
app.add_typer(jobs_cmd.app, name="job")
app.command("import")(io_cmd.import_file)
app.command("export")(io_cmd.export)
app.command("template")(io_cmd.template)
forecast_cmd.register(app)  # forecast, backtest
plan_cmd.register(app)  # plan, order
app.add_typer(report_cmd.app, name="report")
users_cmd.register(app)  # user add/list/disable, serve


def run() -> None:
    """Console-script entry point."""
    debug = "--debug" in sys.argv
    try:
        app(standalone_mode=False)
    except InventoryError as exc:
        if debug:
            traceback.print_exc()
        lines = exc.lines()
        if exc.hint and len(exc.problems) == 1:
            lines = [f"{lines[0]} ({exc.hint})"]
        for line in lines:
            err_console.print(f"error: {line}", markup=False, highlight=False, soft_wrap=True)
        sys.exit(1)
    except (typer.Abort, KeyboardInterrupt):
        err_console.print("error: interrupted", markup=False)
        sys.exit(130)
    except typer.Exit as exc:
        sys.exit(exc.exit_code)
    except Exception as exc:  # click usage errors and the unexpected
        import click

        if isinstance(exc, click.ClickException):
            exc.show()
            sys.exit(exc.exit_code)
        if isinstance(exc, ValueError) and not debug:
            err_console.print(f"error: {exc}", markup=False, highlight=False, soft_wrap=True)
            sys.exit(1)
        if debug:
            raise
        err_console.print(f"error: unexpected {type(exc).__name__}: {exc} "
                          "(run again with --debug for the traceback)", markup=False,
                          soft_wrap=True)
        sys.exit(1)


__all__ = ["app", "run", "state"]
