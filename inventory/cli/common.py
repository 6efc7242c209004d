"""What every command shares: the database option, opening the store, and rendering
(rich tables for people, ``--json`` for programs). Commands stay thin: parse, call one
library function, render."""

from __future__ import annotations

import json
import sys
from collections.abc import Iterator, Sequence
from contextlib import contextmanager
from dataclasses import dataclass
from datetime import date, datetime
from decimal import Decimal
from pathlib import Path
from typing import TYPE_CHECKING, Any

import typer
from rich.console import Console
from rich.table import Table

from inventory.core.errors import InventoryError
from inventory.core.sqlread import resolve_url

if TYPE_CHECKING:  # the database libraries load when a command opens the database
    from sqlalchemy.engine import Engine
    from sqlmodel import Session

    from inventory.core.sqlread import Reader

console = Console()
err_console = Console(stderr=True)


@dataclass
class AppState:
    db: str | None = None
    debug: bool = False

    @property
    def url(self) -> str:
        return resolve_url(self.db)


def state(ctx: typer.Context) -> AppState:
    obj = ctx.find_root().obj
    if not isinstance(obj, AppState):
        obj = AppState()
        ctx.find_root().obj = obj
    return obj


def _require_file(st: AppState) -> None:
    """A SQLite database named by ``--db`` must exist before a command reads or writes it."""
    from inventory.core.sqlread import sqlite_path

    path = sqlite_path(st.url)
    if path not in (None, "", ":memory:") and not Path(path).exists():
        hint = (f"run `inventory{' --db ' + st.db if st.db else ''} init` to create it, "
                "or `inventory demo` to build the demo shop")
        if not st.db and Path("demo.db").exists():  # `inventory demo` ran here, then no --db
            hint = ("the demo shop is in demo.db here: add `--db demo.db` (or set "
                    "INVENTORY_DB=demo.db); " + hint)
        raise InventoryError(f"no database file {path}", hint=hint)


def _demo_hint(st: AppState) -> str:
    return f"run `inventory demo --db {st.db or st.url} --replace` to build it again"


def engine(ctx: typer.Context, *, check_schema: bool = True) -> Engine:
    from inventory.core import build_mark, migrate
    from inventory.core.db import make_engine

    st = state(ctx)
    if check_schema:
        _require_file(st)
    eng = make_engine(st.url)
    if check_schema:
        migrate.require_current(eng, st.db)
        build_mark.require_finished(eng, "demo", _demo_hint(st))
    return eng


@contextmanager
def unit_of_work(ctx: typer.Context) -> Iterator[Session]:
    """A transaction on the configured database: all of it is written, or none."""
    from inventory.core.db import transaction

    with transaction(engine(ctx)) as session:
        yield session


@contextmanager
def reading(ctx: typer.Context) -> Iterator[Session]:
    """A read-only unit of work (:func:`inventory.core.db.read_transaction`): reports and
    lookups never take SQLite's write lock, so they do not hold up a booking."""
    from inventory.core.db import read_transaction

    with read_transaction(engine(ctx)) as session:
        yield session


@contextmanager
def plain_reading(ctx: typer.Context) -> Iterator[Reader]:
    """A read of the configured database by plain SQL (:mod:`inventory.core.sqlread`: on
    SQLite the standard library's driver, read-only, without SQLAlchemy), after the same
    schema and demo-build checks as :func:`reading`."""
    from inventory.core.sqlread import open_reader

    st = state(ctx)
    _require_file(st)
    with open_reader(st.url) as reader:
        reader.require_current(st.db)
        reader.require_finished("demo", _demo_hint(st))
        yield reader


def _default(o: Any) -> Any:
    if isinstance(o, Decimal):
        return str(o)
    if isinstance(o, datetime | date):
        return o.isoformat()
    if hasattr(o, "to_dict"):
        return o.to_dict()
    if hasattr(o, "value"):
        return o.value
    raise TypeError(f"cannot write {type(o).__name__} as JSON")


def print_json(data: Any) -> None:
    sys.stdout.write(json.dumps(data, default=_default, indent=2, ensure_ascii=False) + "\n")


def print_table(title: str | None, header: Sequence[str], rows: Sequence[Sequence[Any]], *,
                right: Sequence[str] = (), caption: str | None = None) -> None:
    table = Table(title=title, caption=caption, header_style="bold", show_lines=False)
    for h in header:
        table.add_column(h, justify="right" if h in right else "left")
    for row in rows:
        table.add_row(*["" if v is None else str(v) for v in row])
    console.print(table)


def say(text: str) -> None:
    console.print(text, highlight=False)
