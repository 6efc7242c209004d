"""Catalog in and out, in our own file layout: parts, suppliers, supplier items, fork
families, seats, kits, kit lines and locations, as csv files in a folder or as sheets of one
workbook (a sheet or file per table, named as below).

A load validates everything first and reports every bad row at once (file, sheet, row,
column, the value and what was expected); nothing is written unless the whole load is valid.
Rows whose key already exists are updated, so a load followed by an export round-trips.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from sqlalchemy import func
from sqlmodel import Session, select

from inventory.catalog.schemas import ORDER, SCHEMAS
from inventory.core.errors import InventoryError, Problem, Source
from inventory.core.fits import fit_class_problems, seat_problems
from inventory.core.model import (
    PartKind,
    SeatSpec,
)
from inventory.core.tables import (
    ForkFamily,
    Kit,
    KitLine,
    Location,
    Movement,
    Part,
    Seat,
    StockBalance,
    Supplier,
    SupplierItem,
)
from inventory.sheets.columns import Parsed, parse_table
from inventory.sheets.read import read_tables


@dataclass
class LoadReport:
    inserted: dict[str, int] = field(default_factory=dict)
    updated: dict[str, int] = field(default_factory=dict)
    tables: list[str] = field(default_factory=list)

    def to_dict(self) -> dict:
        return {"inserted": self.inserted, "updated": self.updated, "tables": self.tables}


Records = dict[str, list[tuple[Source, dict]]]


def read_catalog(path: str | Path) -> tuple[Records, dict[str, Parsed], list[Problem]]:
    """Typed rows per table from a folder or workbook, and every problem found."""
    tables = read_tables(path)
    records: Records = {}
    parsed_by_table: dict[str, Parsed] = {}
    problems: list[Problem] = []
    for table in tables:
        name = table.name.lower()
        if name not in SCHEMAS:
            continue
        parsed = parse_table(table, SCHEMAS[name])
        parsed_by_table[name] = parsed
        problems += parsed.problems
        records.setdefault(name, []).extend(parsed.rows)
    if not records and not problems:
        raise InventoryError(
            f"{path}: no catalog tables found",
            hint=f"name the files or sheets {', '.join(ORDER)}",
        )
    for name, rows in records.items():
        key = SCHEMAS[name].key
        seen: dict[tuple, Source] = {}
        for src, rec in rows:
            k = tuple(str(rec[c]).upper() for c in key)
            if k in seen:
                problems.append(Problem(
                    f"duplicate {'/'.join(key)} {'/'.join(str(rec[c]) for c in key)} "
                    f"(first at row {seen[k].row})", kind="conflict", source=src))
            else:
                seen[k] = src
    return records, parsed_by_table, problems


def _check_refs(session: Session, recs: Records, parsed: dict[str, Parsed]) -> list[Problem]:
    problems: list[Problem] = []
    parts = set(session.exec(select(Part.code))) | {r["code"] for _, r in recs.get("parts", [])}
    kit_parts = set(session.exec(select(Part.code).where(Part.kind == PartKind.KIT))) | {
        r["code"] for _, r in recs.get("parts", []) if r["kind"] == PartKind.KIT}
    suppliers = set(session.exec(select(Supplier.code))) | {
        r["code"] for _, r in recs.get("suppliers", [])}
    forks = set(session.exec(select(ForkFamily.code))) | {
        r["code"] for _, r in recs.get("fork_families", [])}
    kits = set(session.exec(select(Part.code).join(Kit, Kit.part_id == Part.id))) | {
        r["kit"] for _, r in recs.get("kits", [])}

    def ref(src: Source, table: str, col: str, value: str, valid: set[str], what: str) -> None:
        if value not in valid:
            problems.append(Problem(f"unknown {what} {value!r}", kind="unknown",
                                    source=parsed[table].source(src, col)))

    for src, r in recs.get("supplier_items", []):
        ref(src, "supplier_items", "supplier", r["supplier"], suppliers, "supplier")
        ref(src, "supplier_items", "part", r["part"], parts, "part")
    for src, r in recs.get("seats", []):
        ref(src, "seats", "fork", r["fork"], forks, "fork family")
    for src, r in recs.get("kits", []):
        ref(src, "kits", "fork", r["fork"], forks, "fork family")
        ref(src, "kits", "kit", r["kit"], kit_parts, "kit part (a row in parts with kind kit)")
    for src, r in recs.get("kit_lines", []):
        ref(src, "kit_lines", "kit", r["kit"], kits, "kit")
        ref(src, "kit_lines", "part", r["part"], parts, "part")
        if r["part"] in kit_parts:
            problems.append(Problem(f"a kit line cannot hold another kit ({r['part']})",
                                    source=parsed["kit_lines"].source(src, "part")))
    for src, r in recs.get("fork_families", []):
        if r["travel_min_mm"] > r["travel_max_mm"]:
            problems.append(Problem(
                f"travel_min_mm {r['travel_min_mm']} is above travel_max_mm {r['travel_max_mm']}",
                source=parsed["fork_families"].source(src, "travel_min_mm")))
    return problems


def _check_geometry(recs: Records, parsed: dict[str, Parsed]) -> list[Problem]:
    """Seats whose geometry cannot exist (a groove root at or above its bore, a housing bore
    not above its stanchion), tolerance classes of the wrong role or not covered (``f7``
    typed for a bore), and parts whose outside diameter is not above the inside: an error
    at the cell to blame (:mod:`inventory.core.fits`)."""
    problems: list[Problem] = []
    fields = [f.name for f in dataclasses.fields(SeatSpec)]
    for src, r in recs.get("seats", []):
        seat = SeatSpec(**{k: r[k] for k in fields if r.get(k) is not None})
        for column, message in seat_problems(seat) + fit_class_problems(seat):
            problems.append(Problem(message, source=parsed["seats"].source(src, column)))
    for src, r in recs.get("parts", []):
        if r.get("id_mm") is not None and r.get("od_mm") is not None \
                and r["od_mm"] <= r["id_mm"]:
            problems.append(Problem(
                f"expected an outside diameter above the inside diameter "
                f"(id_mm {r['id_mm']:g}), got {r['od_mm']:g}",
                source=parsed["parts"].source(src, "od_mm")))
    return problems


def _check_stocked(session: Session, recs: Records, parsed: dict[str, Parsed]) -> list[Problem]:
    """A part with stock movements keeps its kind and unit (re-typing an O-ring with stock as
    oil in ml would change what every movement of it means): a row that would change them is
    an error at its cell. A row without a unit means "each", as it does when loading."""
    rows = recs.get("parts", [])
    codes = [r["code"] for _, r in rows]
    if not codes:
        return []
    stocked: dict[str, tuple[str, str, int]] = {}
    for i in range(0, len(codes), 500):
        chunk = codes[i:i + 500]
        moved = (select(Movement.part_id).where(Movement.part_id == Part.id).exists())
        held = (select(func.coalesce(func.sum(StockBalance.qty), 0))
                .where(StockBalance.part_id == Part.id).scalar_subquery())
        for code, kind, unit, on_hand in session.exec(
                select(Part.code, Part.kind, Part.unit, held)
                .where(Part.code.in_(chunk), moved)):
            stocked[code] = (str(kind), str(unit), int(on_hand))
    problems: list[Problem] = []
    for src, r in rows:
        if r["code"] not in stocked:
            continue
        kind, unit, on_hand = stocked[r["code"]]
        for name, now, given in (("kind", kind, str(r["kind"])),
                                 ("unit", unit, str(r["unit"] or "each"))):
            if given != now:
                problems.append(Problem(
                    f"part {r['code']} has stock movements ({on_hand} {unit} on hand): "
                    f"{name} {given!r} would change it, expected {now!r}", kind="conflict",
                    source=parsed["parts"].source(src, name)))
    return problems


def load_catalog(session: Session, path: str | Path) -> LoadReport:
    """Validate the whole catalog, then write it in the caller's transaction."""
    recs, parsed, problems = read_catalog(path)
    problems += _check_refs(session, recs, parsed)
    problems += _check_geometry(recs, parsed)
    problems += _check_stocked(session, recs, parsed)
    if problems:
        raise InventoryError(problems, hint="fix the rows above; nothing was written")
    report = LoadReport(tables=[t for t in ORDER if t in recs])
    for table in ORDER:
        ins = upd = 0
        for _, rec in recs.get(table, []):
            created = _APPLY[table](session, rec)
            ins += created
            upd += not created
        if table in recs:
            report.inserted[table] = ins
            report.updated[table] = upd
        session.flush()
    if session.exec(select(Location.id)).first() is None:
        # No locations.csv and none before: stock goes to the ledger's default location.
        session.add(Location(code=DEFAULT_LOCATION,
                             description="Main store (default: the catalog has no locations.csv)"))
        session.flush()
        report.tables.insert(0, "locations")
        report.inserted["locations"], report.updated["locations"] = 1, 0
    return report


DEFAULT_LOCATION = "MAIN"  # the same code as inventory.stock.ledger.DEFAULT_LOCATION


def _upsert(session: Session, model, where: dict[str, Any], values: dict[str, Any]) -> bool:
    stmt = select(model)
    for k, v in where.items():
        stmt = stmt.where(getattr(model, k) == v)
    row = session.exec(stmt).first()
    created = row is None
    if created:
        row = model(**where, **values)
    else:
        for k, v in values.items():
            setattr(row, k, v)
    session.add(row)
    session.flush()
    return created


def _id(session: Session, model, code: str) -> int:
    return session.exec(select(model.id).where(model.code == code)).one()


def _apply_location(s, r):
    return _upsert(s, Location, {"code": r["code"]}, {"description": r["description"] or ""})


def _apply_part(s, r):
    vals = {k: r[k] for k in ("kind", "id_mm", "od_mm", "height_mm", "cs_mm", "material",
                              "hardness", "volume_cm3", "standard")}
    vals.update(description=r["description"] or "", notes=r["notes"] or "",
                unit=r["unit"] or "each", kind=str(r["kind"]))
    return _upsert(s, Part, {"code": r["code"]}, vals)


def _apply_supplier(s, r):
    from decimal import Decimal
    vals = {k: r[k] for k in ("name", "lead_time_days", "order_cycle_days", "currency")}
    vals.update(lead_time_sd_days=r["lead_time_sd_days"] or 0.0,
                min_order_value=r["min_order_value"] if r["min_order_value"] is not None
                else Decimal("0"))
    return _upsert(s, Supplier, {"code": r["code"]}, vals)


def _apply_supplier_item(s, r):
    vals = {k: r[k] for k in ("supplier_code", "unit_cost", "pack_size", "min_order_qty",
                              "lead_time_days")}
    vals["supplier_code"] = vals["supplier_code"] or ""
    return _upsert(s, SupplierItem, {"supplier_id": _id(s, Supplier, r["supplier"]),
                                     "part_id": _id(s, Part, r["part"])}, vals)


def _apply_fork(s, r):
    vals = {k: r[k] for k in ("description", "stanchion_mm", "travel_min_mm", "travel_max_mm",
                              "spring", "year_from", "year_to")}
    vals["description"] = vals["description"] or ""
    vals["spring"] = str(vals["spring"])
    return _upsert(s, ForkFamily, {"code": r["code"]}, vals)


SEAT_FIELDS = ("position", "part_kind", "gland", "motion", "medium", "qty_per_fork", "rod_mm",
               "bore_mm", "groove_mm", "groove_width_mm", "housing_depth_mm", "rod_fit",
               "bore_fit", "chamber_volume_cm3", "piston_mm", "travel_mm", "set_pressure_bar",
               "notes")


def _apply_seat(s, r):
    vals = {k: (str(r[k]) if k in ("part_kind", "gland", "motion", "medium") else r[k])
            for k in SEAT_FIELDS}
    vals["notes"] = vals["notes"] or ""
    return _upsert(s, Seat, {"fork_family_id": _id(s, ForkFamily, r["fork"]), "code": r["seat"]},
                   vals)


def _apply_kit(s, r):
    return _upsert(s, Kit, {"part_id": _id(s, Part, r["kit"])},
                   {"fork_family_id": _id(s, ForkFamily, r["fork"]),
                    "service_level": str(r["service_level"]),
                    "description": r["description"] or ""})


def _apply_kit_line(s, r):
    kit_id = s.exec(select(Kit.id).join(Part, Part.id == Kit.part_id)
                    .where(Part.code == r["kit"])).one()
    return _upsert(s, KitLine, {"kit_id": kit_id, "part_id": _id(s, Part, r["part"])},
                   {"qty": r["qty"]})


_APPLY = {"locations": _apply_location, "parts": _apply_part, "suppliers": _apply_supplier,
          "supplier_items": _apply_supplier_item, "fork_families": _apply_fork,
          "seats": _apply_seat, "kits": _apply_kit, "kit_lines": _apply_kit_line}
