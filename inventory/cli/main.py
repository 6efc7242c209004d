"""The ``inventory`` command: global options, sub-commands, and the one error handler that
turns every known failure into a line on stderr and a non-zero exit."""

from __future__ import annotations

import functools
import inspect
import sys
import traceback
from collections.abc import Callable
from typing import Any

import typer

from inventory.cli import (
    bench_cmd,
    books_cmd,
    catalog_cmd,
    forecast_cmd,
    io_cmd,
    jobs_cmd,
    month_cmd,
    plan_cmd,
    report_cmd,
    stock,
    users_cmd,
)
from inventory.cli.common import AppState, err_console, say, state
from inventory.core.errors import InventoryError

DB_HELP = ("Database URL or SQLite file (default inventory.db here); "
           "goes before or after the sub-command.")

app = typer.Typer(
    name="inventory",
    help="Seal and parts planner for suspension service shops.",
    no_args_is_help=True,
    add_completion=False,
    pretty_exceptions_enable=False,
)


@app.callback()
def main(ctx: typer.Context,
         db: str = typer.Option(None, "--db", envvar="INVENTORY_DB", help=DB_HELP),
         debug: bool = typer.Option(False, "--debug", help="Show tracebacks.")) -> None:
    ctx.obj = AppState(db=db, debug=debug)


@app.command()
def init(ctx: typer.Context) -> None:
    """Create the database, or upgrade it to this version's schema."""
    from inventory.cli.common import engine
    from inventory.core import migrate
    from inventory.core.provision import ensure_database

    created = ensure_database(state(ctx).url)
    if created:
        say(f"created PostgreSQL database {created}")
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
         quick: bool = typer.Option(False, "--quick", help="Build only, no tour."),
         replace: bool = typer.Option(False, "--replace",
                                      help="Delete the database at --db even when it is not a "
                                           "demo shop.")) -> None:
    """Build a fresh demo shop database from catalog_demo and show what the tool does.

    A demo database already at --db is rebuilt; any other database is kept unless --replace.
    """
    from inventory.demo.build import build_demo
    from inventory.demo.tour import tour

    url = build_demo(db, replace=replace)
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
app.add_typer(month_cmd.app, name="month")
books_cmd.register(app)  # check, backup
users_cmd.register(app)  # user add/list/disable, serve


def _with_global_options(fn: Callable[..., Any]) -> Callable[..., Any]:
    """The same command, also taking ``--db`` and ``--debug`` after the sub-command name.

    Built only from typer's public behaviour: typer reads a command's parameters from its
    signature, so the wrapper shows the original parameters plus the two global ones.
    """
    sig = inspect.signature(fn, eval_str=True)
    names = set(sig.parameters)
    if "db" in names:  # the command has its own --db (e.g. ``demo``: where to build)
        return fn
    extra = [
        inspect.Parameter("_global_ctx", inspect.Parameter.KEYWORD_ONLY, annotation=typer.Context),
        inspect.Parameter("_global_db", inspect.Parameter.KEYWORD_ONLY, annotation=str | None,
                          default=typer.Option(None, "--db", help=DB_HELP)),
        inspect.Parameter("_global_debug", inspect.Parameter.KEYWORD_ONLY, annotation=bool,
                          default=typer.Option(False, "--debug", help="Show tracebacks.")),
    ]
    ctx_names = [n for n, p in sig.parameters.items() if p.annotation is typer.Context]

    @functools.wraps(fn)
    def wrapper(*args: Any, _global_ctx: typer.Context, _global_db: str | None = None,
                _global_debug: bool = False, **kwargs: Any) -> Any:
        st = state(_global_ctx)
        if _global_db is not None:
            st.db = _global_db
        st.debug = st.debug or _global_debug
        for name in ctx_names:
            kwargs[name] = _global_ctx
        return fn(*args, **kwargs)

    params = [p for p in sig.parameters.values() if p.annotation is not typer.Context]
    positional = [p for p in params if p.kind is not inspect.Parameter.KEYWORD_ONLY]
    keyword = [p for p in params if p.kind is inspect.Parameter.KEYWORD_ONLY]
    wrapper.__signature__ = sig.replace(parameters=positional + keyword + extra)  # type: ignore[attr-defined]
    wrapper.__annotations__ = {p.name: p.annotation for p in positional + keyword + extra}
    del wrapper.__wrapped__  # typer must read the wrapper's signature, not the original's
    return wrapper


def _accept_global_options(typer_app: typer.Typer) -> None:
    """Let every command take ``--db``/``--debug`` after its name as well as before it."""
    for info in typer_app.registered_commands:
        if info.callback is not None:
            info.callback = _with_global_options(info.callback)
    for group in typer_app.registered_groups:
        if group.typer_instance is not None:
            _accept_global_options(group.typer_instance)


# after every registration above: commands registered later would not take --db after
# their name
_accept_global_options(app)


def run() -> None:
    """Console-script entry point.

    Typer runs in standalone mode, so usage errors (unknown command, missing or bad option)
    print the usual usage message with its hint and exit with status 2. Everything the tool
    itself refuses arrives as an ``InventoryError`` and becomes one line and exit status 1.
    """
    debug = "--debug" in sys.argv
    try:
        app()
    except InventoryError as exc:
        if debug:
            traceback.print_exc()
        lines = exc.lines()
        if exc.hint and len(exc.problems) == 1:
            lines = [f"{lines[0]} ({exc.hint})"]
        for line in lines:
            err_console.print(f"error: {line}", markup=False, highlight=False, soft_wrap=True)
        sys.exit(1)
    except KeyboardInterrupt:
        err_console.print("error: interrupted", markup=False)
        sys.exit(130)
    except Exception as exc:  # the unexpected
        from inventory.core.db import explain  # locked, disk full, permission, connection...

        mapped = explain(exc)
        if mapped is not None:
            if debug:
                traceback.print_exc()
            line = mapped.lines()[0] + (f" ({mapped.hint})" if mapped.hint else "")
            err_console.print(f"error: {line}", markup=False, highlight=False, soft_wrap=True)
            sys.exit(1)
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
