"""The demo shop: build a fresh database from ``catalog_demo/`` and show a short tour.

The demo data is invented (see catalog_demo/README.md). Building replays its three years in
date order through the same ledger and job code the shop uses: opening stock, deliveries,
service jobs and shelf counts.
"""

from __future__ import annotations

from collections import defaultdict
from datetime import UTC, date, datetime, time
from pathlib import Path

from rich.progress import Progress
from sqlmodel import Session

from inventory.errors import InventoryError
from inventory.sheets import cells
from inventory.sheets.columns import Column as C
from inventory.sheets.columns import Schema, parse_table
from inventory.sheets.read import read_csv
from inventory.store import ledger, migrate
from inventory.store.catalog import load_catalog
from inventory.store.db import make_engine, resolve_url, transaction
from inventory.store.jobs import JobItem, record_job

OPENING = Schema("opening_stock", (
    C("part", cells.code, required=True), C("qty", cells.positive_int, required=True),
    C("unit_cost", cells.money, required=True), C("lot", cells.code), C("cured", cells.quarter),
    C("received", cells.iso_date, required=True), C("location", cells.code, default="MAIN"),
))
RECEIPTS = Schema("receipts", (
    C("date", cells.iso_date, required=True), C("supplier", cells.code),
    C("part", cells.code, required=True), C("qty", cells.positive_int, required=True),
    C("unit_cost", cells.money, required=True), C("lot", cells.code), C("cured", cells.quarter),
    C("location", cells.code, default="MAIN"), C("order_ref", cells.code),
))
HISTORY = Schema("history", (
    C("job", cells.code, required=True), C("date", cells.iso_date, required=True),
    C("fork", cells.code, required=True), C("service", cells.text, required=True),
    C("hours", cells.nonneg_int), C("fork_ref", cells.code),
    C("item", cells.code, required=True), C("qty", cells.positive_int, required=True),
))
COUNTS = Schema("counts", (
    C("date", cells.iso_date, required=True), C("part", cells.code, required=True),
    C("location", cells.code, default="MAIN"), C("counted", cells.nonneg_int, required=True),
))


def demo_dir() -> Path:
    """``catalog_demo/`` beside the package (a checkout) or in the working directory."""
    for base in (Path(__file__).resolve().parent.parent, Path.cwd()):
        cand = base / "catalog_demo"
        if (cand / "parts.csv").exists():
            return cand
    raise InventoryError("cannot find the catalog_demo folder",
                         hint="run from the project checkout")


def _rows(path: Path, schema: Schema) -> list[dict]:
    parsed = parse_table(read_csv(path), schema)
    if parsed.problems:
        raise InventoryError(parsed.problems)
    return [r for _, r in parsed.rows]


def _noon(day: date, minute: int = 0) -> datetime:
    return datetime.combine(day, time(12, minute), tzinfo=UTC)


def replay(session: Session, folder: Path, *, progress: bool = True) -> dict[str, int]:
    """Opening stock, deliveries, jobs and counts of the demo, in date order."""
    opening = _rows(folder / "opening_stock.csv", OPENING)
    receipts = _rows(folder / "receipts.csv", RECEIPTS)
    history = _rows(folder / "history.csv", HISTORY)
    counts = _rows(folder / "counts.csv", COUNTS) if (folder / "counts.csv").exists() else []
    for r in opening:
        ledger.receive(session, r["part"], r["qty"], r["unit_cost"], lot=r["lot"],
                       cured=r["cured"], location=r["location"], received=r["received"],
                       ts=_noon(r["received"], 0), reference="OPENING", user="demo")
    by_day: dict[date, list] = defaultdict(list)
    for r in receipts:
        by_day[r["date"]].append(("a-receipt", r))
    jobs: dict[str, list[dict]] = defaultdict(list)
    for r in history:
        jobs[r["job"]].append(r)
    for ref, lines in jobs.items():
        by_day[lines[0]["date"]].append(("b-job", (ref, lines)))
    for r in counts:
        by_day[r["date"]].append(("c-count", r))
    n_jobs = 0
    with Progress(transient=True, disable=not progress) as bar:
        task = bar.add_task("replaying the demo's three years", total=len(by_day))
        for day in sorted(by_day):
            for kind, payload in sorted(by_day[day], key=lambda e: e[0]):
                if kind == "a-receipt":
                    r = payload
                    ledger.receive(session, r["part"], r["qty"], r["unit_cost"], lot=r["lot"],
                                   cured=r["cured"], location=r["location"], received=day,
                                   ts=_noon(day, 0), reference=r["order_ref"],
                                   supplier=r["supplier"], user="demo")
                elif kind == "b-job":
                    ref, lines = payload
                    first = lines[0]
                    record_job(session, ref=ref, day=day, fork=first["fork"],
                               service=first["service"], hours=first["hours"],
                               fork_ref=first["fork_ref"],
                               items=[JobItem(x["item"], x["qty"]) for x in lines])
                    n_jobs += 1
                else:
                    r = payload
                    ledger.count(session, r["part"], r["counted"], location=r["location"],
                                 ts=_noon(day, 30), user="demo", reference="COUNT")
            bar.advance(task)
    return {"opening_lots": len(opening), "receipts": len(receipts), "jobs": n_jobs,
            "counts": len(counts)}


def build_demo(db: str = "demo.db", *, progress: bool = True) -> str:
    """A fresh demo database at ``db`` (a SQLite path or URL); returns its URL."""
    url = resolve_url(db)
    if url.startswith("sqlite:///"):
        path = Path(url[len("sqlite:///"):])
        for suffix in ("", "-wal", "-shm"):
            p = Path(str(path) + suffix)
            if p.exists():
                p.unlink()
    engine = make_engine(url, fresh=True)
    migrate.upgrade(engine)
    folder = demo_dir()
    with transaction(engine) as session:
        load_catalog(session, folder)
        replay(session, folder, progress=progress)
    return url


def tour(url: str, reports: str = "reports") -> None:
    """A short walk through what the tool does, on the demo database."""
    from inventory.cli.common import print_table, say

    engine = make_engine(url)
    with Session(engine) as s:
        lines = ledger.on_hand(s)
    total = sum(ln.value for ln in lines)
    say(f"[bold]Demo shop built[/bold] at {url}")
    say(f"Stock on hand: {len(lines)} part/location lines, value {total:,.2f} EUR")
    top = sorted(lines, key=lambda ln: ln.value, reverse=True)[:8]
    print_table("Highest stock value", ["part", "location", "on hand", "value"],
                [[ln.part, ln.location, ln.on_hand, f"{ln.value:,.2f}"] for ln in top],
                right=("on hand", "value"))
    say(f"Try: inventory --db {url} stock on-hand --json")
