"""Exports of the shop's tables (parts, stock, lots, movements, jobs) to xlsx or csv, and
empty import templates with drop-down lists.

The jobs export has the layout the history import reads (one row per job line), so an
export can be imported into another database. Workbooks get a bold frozen header, filters,
widths that fit and number formats; text that looks like a formula is written as text
(:mod:`inventory.sheets.write`).
"""

from __future__ import annotations

from collections.abc import Iterable, Iterator, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from sqlalchemy import func
from sqlmodel import Session, select

from inventory.catalog.schemas import SCHEMAS as CATALOG_SCHEMAS
from inventory.core.errors import InventoryError
from inventory.core.model import PartKind, ServiceLevel
from inventory.core.tables import (
    ForkFamily,
    Kit,
    Location,
    Lot,
    Movement,
    Part,
    StockBalance,
    Supplier,
)
from inventory.history import service
from inventory.history.imports import EXAMPLES
from inventory.history.imports import SCHEMAS as IMPORT_SCHEMAS
from inventory.history.jobs import list_jobs
from inventory.sheets.write import SheetSpec, write_csv, write_workbook
from inventory.stock import ledger

STREAM_ROWS = 5_000  # rows fetched from the database at a time when streaming
TABLES = service.TABLES  # one list, kept where the faces read it
MM = "0.00"
MONEY = "#,##0.00##"
COUNT = "#,##0"


@dataclass(frozen=True)
class Export:
    """A table to write: ``rows`` may be a generator (movements stream from the database
    cursor into the csv file, so a million movements never sit in memory)."""

    header: list[str]
    rows: Iterable[list[Any]]
    number_formats: dict[str, str]


def _parts(session: Session) -> Export:
    header = CATALOG_SCHEMAS["parts"].header
    rows = []
    for p in session.exec(select(Part).order_by(Part.code)):
        d = p.model_dump()
        rows.append([d.get(h) for h in header])
    fmts = {h: MM for h in ("id_mm", "od_mm", "height_mm", "cs_mm")} | {"volume_cm3": "0.0"}
    return Export(header, rows, fmts)


def _stock(session: Session) -> Export:
    lines = ledger.on_hand(session)
    return Export(["part", "location", "on_hand", "value"],
                  [[ln.part, ln.location, ln.on_hand, ln.value] for ln in lines],
                  {"on_hand": COUNT, "value": MONEY})


def _lots(session: Session) -> Export:
    on_hand = (select(StockBalance.lot_id, func.sum(StockBalance.qty).label("qty"))
               .group_by(StockBalance.lot_id).subquery())
    q = (select(Part.code, Lot.code, Lot.cured, Lot.received, Lot.unit_cost, Supplier.code,
                Lot.extended_until, func.coalesce(on_hand.c.qty, 0))
         .join(Part, Part.id == Lot.part_id)
         .outerjoin(Supplier, Supplier.id == Lot.supplier_id)
         .outerjoin(on_hand, on_hand.c.lot_id == Lot.id)
         .order_by(Part.code, Lot.received, Lot.code))
    rows = [list(r) for r in session.exec(q)]
    return Export(["part", "lot", "cured", "received", "unit_cost", "supplier",
                   "extended_until", "on_hand"], rows,
                  {"unit_cost": MONEY, "on_hand": COUNT})


def _movements(session: Session) -> Export:
    q = (select(Movement.id, Movement.ts, Part.code, Location.code, Lot.code, Movement.qty,
                Movement.kind, Movement.unit_cost, Movement.reference, Movement.reason,
                Movement.user, Movement.batch_id)
         .join(Part, Part.id == Movement.part_id)
         .join(Location, Location.id == Movement.location_id)
         .join(Lot, Lot.id == Movement.lot_id)
         .order_by(Movement.ts, Movement.id)
         .execution_options(yield_per=STREAM_ROWS))  # a server-side cursor on PostgreSQL

    def rows() -> Iterator[list[Any]]:
        for row in session.exec(q):
            r = list(row)
            if r[1] is not None and r[1].tzinfo is not None:
                r[1] = r[1].replace(tzinfo=None)  # spreadsheets have no time zones; UTC stored
            yield r

    return Export(["id", "ts_utc", "part", "location", "lot", "qty", "kind", "unit_cost",
                   "reference", "reason", "user", "batch"], rows(),
                  {"qty": COUNT, "unit_cost": MONEY})


def _jobs(session: Session) -> Export:
    header = [c.name for c in IMPORT_SCHEMAS["history"].columns if c.name != "kit"]
    rows = []
    for job in list_jobs(session, newest_first=False):
        if job.voided:  # the export reads back as history: a voided job is no job
            continue
        for code, qty in job.lines:
            rows.append([job.ref, job.day, job.fork, job.service, job.hours, job.fork_ref,
                         code, qty])
    return Export(header, rows, {"qty": COUNT, "hours": COUNT})


_EXPORTS = {"parts": _parts, "stock": _stock, "lots": _lots, "movements": _movements,
            "jobs": _jobs}


def export_table(session: Session, table: str, path: str | Path, *, fmt: str | None = None
                 ) -> tuple[Path, int]:
    """Write ``table`` to ``path`` as xlsx or csv (from ``fmt`` or the file suffix); return
    the path and the number of rows."""
    if table not in _EXPORTS:
        raise InventoryError(f"unknown table {table!r}", hint=f"use one of {', '.join(TABLES)}")
    path = Path(path)
    fmt = fmt or path.suffix.lower().lstrip(".")
    if fmt not in ("xlsx", "csv"):
        raise InventoryError(f"{path.name}: expected a .xlsx or .csv file name")
    data = _EXPORTS[table](session)
    count = 0

    def counted() -> Iterator[list[Any]]:
        nonlocal count
        for row in data.rows:
            count += 1
            yield row

    if fmt == "csv":
        write_csv(path, data.header, counted())  # written row by row as read
    else:
        write_workbook(path, [SheetSpec(table, data.header, list(counted()),
                                        number_formats=data.number_formats)])
    return path, count


# --- templates ---------------------------------------------------------------------------


def template_lists(session: Session, kind: str) -> dict[str, list[str]]:
    """The drop-down values of each column of a ``kind`` template."""
    parts = list(session.exec(select(Part.code).where(Part.kind != PartKind.KIT)
                              .order_by(Part.code)))
    kits = list(session.exec(select(Part.code).join(Kit, Kit.part_id == Part.id)
                             .order_by(Part.code)))
    forks = list(session.exec(select(ForkFamily.code).order_by(ForkFamily.code)))
    locations = list(session.exec(select(Location.code).order_by(Location.code)))
    suppliers = list(session.exec(select(Supplier.code).order_by(Supplier.code)))
    levels = [str(s) for s in ServiceLevel]
    return {
        "history": {"fork": forks, "service": levels, "item": parts + kits, "kit": kits},
        "counts": {"part": parts + kits, "location": locations},
        "receipts": {"part": parts + kits, "supplier": suppliers, "location": locations},
        "catalog": {"kind": [str(k) for k in PartKind], "unit": ["each", "ml"]},
    }[kind]


def _example(session: Session, kind: str, lists: dict[str, Sequence[str]]) -> dict[str, Any]:
    """The kind's example row, with codes from this database where it has them."""
    ex = dict(EXAMPLES[kind])
    if kind == "history" and lists.get("fork"):
        fam = session.exec(select(ForkFamily).order_by(ForkFamily.code)).first()
        kit = session.exec(select(Part.code).join(Kit, Kit.part_id == Part.id)
                           .where(Kit.fork_family_id == fam.id).order_by(Part.code)).first()
        ex.update(fork=fam.code, kit=kit or ex["kit"])
        if kit is None and lists.get("item"):
            ex.update(kit="", item=lists["item"][0])
    for name in ("part", "supplier", "location"):
        if lists.get(name) and name in ex:
            ex[name] = lists[name][0]
    if kind == "catalog":
        first = session.exec(select(Part).where(Part.kind == PartKind.O_RING)
                             .order_by(Part.code)).first()
        if first is not None:
            ex.update(code=first.code, description=first.description,
                      id_mm=f"{first.id_mm} mm" if first.id_mm else ex["id_mm"],
                      cs_mm=first.cs_mm or ex["cs_mm"], material=first.material,
                      hardness=first.hardness)
    return ex


LOOSE = {"fork"}  # a fork model may be typed as free text; the import resolves it


def write_template(session: Session, kind: str, path: str | Path) -> Path:
    """An empty import template for ``kind``: our headers with drop-down lists on the first
    sheet (named after the kind, ready to fill in) and one filled-in example row on the sheet
    ``example`` (kept apart so it is never imported by accident)."""
    if kind not in IMPORT_SCHEMAS:
        raise InventoryError(f"unknown template kind {kind!r}",
                             hint=f"use one of {', '.join(IMPORT_SCHEMAS)}")
    path = Path(path)
    if path.suffix.lower() != ".xlsx":
        raise InventoryError(f"{path.name}: a template is an .xlsx workbook",
                             hint="give a file name ending in .xlsx")
    schema = IMPORT_SCHEMAS[kind]
    lists = template_lists(session, kind)
    ex = _example(session, kind, lists)
    header = schema.header
    widths = {h: max(12, len(h) + 4) for h in header}
    data = SheetSpec(kind, header, [], widths=widths, lists=lists,
                     loose_lists=frozenset(LOOSE & set(lists)))
    example = SheetSpec("example", header, [[ex.get(h) for h in header]], widths=widths)
    return write_workbook(path, [data, example])
