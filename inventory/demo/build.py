"""The demo shop: build a fresh database from ``catalog_demo/`` and show a short tour.

The demo data is invented (see catalog_demo/README.md). Building replays its three years in
date order through the same ledger and job code the shop uses: opening stock, deliveries,
service jobs and shelf counts.
"""

from __future__ import annotations

from datetime import UTC, date, datetime, time
from pathlib import Path

from rich.progress import Progress, SpinnerColumn, TextColumn
from sqlmodel import Session

from inventory.catalog.load import load_catalog
from inventory.core import build_mark, migrate
from inventory.core.db import has_tables, make_engine, resolve_url, transaction
from inventory.core.errors import InventoryError
from inventory.history.imports import Event, ImportSettings, apply_import
from inventory.sheets import cells, kinds
from inventory.sheets.columns import Schema, parse_table
from inventory.sheets.read import read_csv
from inventory.stock import service as stock


def demo_dir() -> Path:
    """``catalog_demo/`` beside the ``inventory`` package (a checkout) or in the working
    directory."""
    here = Path(__file__).resolve()
    for base in (here.parents[2], here.parents[1], Path.cwd()):
        cand = base / "catalog_demo"
        if (cand / "parts.csv").exists():
            return cand
    raise InventoryError("cannot find the catalog_demo folder",
                         hint="run from the project checkout")


def _rows(path: Path, schema: Schema) -> list[dict]:
    """Rows of a demo csv through the import's own column definitions; the demo writes
    ISO dates, so the date column is read as one (no day/month guessing needed)."""
    parsed = parse_table(read_csv(path), schema)
    if parsed.problems:
        raise InventoryError(parsed.problems)
    return [{**r, "date": cells.iso_date(r["date"])} for _, r in parsed.rows]


def _noon(day: date, minute: int = 0) -> datetime:
    return datetime.combine(day, time(12, minute), tzinfo=UTC)


def replay(session: Session, folder: Path, *, progress: bool = True) -> dict[str, int]:
    """Opening stock, deliveries, jobs and counts of the demo, in date order.

    The service history goes through the spreadsheet import (``inventory import history``),
    so the demo database records it as an import batch and re-importing history.csv is a
    no-op; deliveries and counts are replayed on their days in between (before and after the
    day's jobs).
    """
    opening = _rows(folder / "opening_stock.csv", kinds.RECEIPTS)  # "received" is the date
    receipts = _rows(folder / "receipts.csv", kinds.RECEIPTS)
    counts = _rows(folder / "counts.csv", kinds.COUNTS) if (folder / "counts.csv").exists() else []
    # The opening balance is booked on the day the demo's books start (the latest lot's
    # receipt date); each lot keeps its own receipt date and cure quarter.
    opening_day = max(r["date"] for r in opening)
    for r in opening:
        stock.book_receipt(session, stock.Receipt(
            r["part"], r["qty"], r["unit_cost"], lot=r["lot"], cured=r["cured"],
            location=r["location"], received=r["date"], ts=_noon(opening_day, 0),
            reference="OPENING", user="demo"))

    def receive(r: dict):
        def run(s: Session) -> list[str]:
            stock.book_receipt(s, stock.Receipt(
                r["part"], r["qty"], r["unit_cost"], lot=r["lot"], cured=r["cured"],
                location=r["location"], received=r["date"], ts=_noon(r["date"], 0),
                reference=r["order_ref"], supplier=r["supplier"], user="demo"))
            return [r["part"]]
        return run

    def count(r: dict):
        def run(s: Session) -> list[str]:
            stock.book_count(s, stock.Count(r["part"], r["counted"], location=r["location"],
                                            ts=_noon(r["date"], 30), user="demo",
                                            reference="COUNT"))
            return [r["part"]]
        return run

    events = [Event(r["date"], 0, receive(r)) for r in receipts]
    events += [Event(r["date"], 2, count(r)) for r in counts]
    # The demo's dates are its own three years: no "future date" check against this machine.
    settings = ImportSettings(kind="history", user="demo", today=date.max)
    with Progress(SpinnerColumn(), TextColumn("{task.description}"), transient=True,
                  disable=not progress) as bar:
        bar.add_task("replaying the demo's three years", total=None)
        report = apply_import(session, folder / "history.csv", settings, events=events)
    return {"opening_lots": len(opening), "receipts": len(receipts), "jobs": report.new,
            "counts": len(counts)}


DEMO = "demo"  # the build mark of a demo database (inventory.core.build_mark)


def check_target(url: str, db: str, *, replace: bool = False) -> str | None:
    """What is at ``url`` now: None (nothing, or nothing worth keeping), ``demo`` (a demo
    database, finished or not, rebuilt without asking) or ``other`` (data that is not a demo
    shop, replaced only with ``replace``, else an :class:`InventoryError`)."""
    from sqlalchemy.exc import DBAPIError

    if url.startswith("sqlite:///"):
        path = Path(url[len("sqlite:///"):])
        if path.is_dir():
            raise InventoryError(f"{path} is a folder, not a database file",
                                 hint="give a file name with --db")
        if not path.exists() or path.stat().st_size == 0:
            return None
    engine = make_engine(url, fresh=True)
    try:
        state = build_mark.marks(engine).get(DEMO)
        holds = has_tables(engine)
    except DBAPIError:  # not a database at all (e.g. a spreadsheet given as --db)
        state, holds = None, True
    finally:
        engine.dispose()
    if state is not None:
        return DEMO
    if not holds:
        return None
    if replace:
        return "other"
    raise InventoryError(
        f"{db} already holds a database that is not a demo shop: `inventory demo` would "
        "delete it", kind="conflict",
        hint=f"give another --db, or run `inventory demo --db {db} --replace` to delete it "
             "and build the demo there")


def _clear(url: str) -> None:
    """Delete what is at ``url``: the SQLite file and its journals, or every table of this
    tool's schema on a server database."""
    if url.startswith("sqlite:///"):
        path = Path(url[len("sqlite:///"):])
        for suffix in ("", "-wal", "-shm", "-journal"):
            p = Path(str(path) + suffix)
            if p.exists():
                p.unlink()
        return
    from sqlalchemy import text
    from sqlmodel import SQLModel

    engine = make_engine(url, fresh=True)
    try:
        SQLModel.metadata.drop_all(engine)
        with engine.begin() as conn:
            conn.execute(text("DROP TABLE IF EXISTS alembic_version"))
    finally:
        engine.dispose()


def build_demo(db: str = "demo.db", *, replace: bool = False, progress: bool = True) -> str:
    """A fresh demo database at ``db`` (a SQLite path or URL); returns its URL.

    A demo database already there is rebuilt; any other database is refused unless
    ``replace``. The build writes a started mark first and its finished mark in the same
    transaction as the demo's data, so a build killed half-way leaves a database every
    command reports as unfinished (:func:`inventory.core.build_mark.require_finished`)."""
    folder = demo_dir()
    url = resolve_url(db)
    if check_target(url, db, replace=replace) is not None:
        _clear(url)
    elif url.startswith("sqlite:///"):
        _clear(url)  # an empty file, or journals left beside no database
    engine = make_engine(url, fresh=True)
    migrate.upgrade(engine)
    with transaction(engine) as session:
        build_mark.mark_started(session, DEMO)
    with transaction(engine) as session:
        load_catalog(session, folder)
        replay(session, folder, progress=progress)
        signs = demo_people(session)
        build_mark.mark_finished(session, DEMO)
    if progress:
        print("Web app sign-in (inventory serve, then http://127.0.0.1:8000/):")
        for name, role, password in signs:
            print(f"  {role:<10} name {name:<6} password {password}")
    return url


#: One person per role for the demo shop, with the passwords the demo prints (demo only:
#: a shop adds its own people with `inventory user add`).
DEMO_PEOPLE = (("tech", "technician", "bench-demo-1"), ("boss", "manager", "office-demo-1"),
               ("admin", "admin", "admin-demo-1"))


def demo_people(session: Session) -> tuple[tuple[str, str, str], ...]:
    from inventory.people.service import add_person

    for name, role, password in DEMO_PEOPLE:
        add_person(session, name, role, password)
    return DEMO_PEOPLE
