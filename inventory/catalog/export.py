"""The catalog out, in the layout a load reads (:mod:`inventory.catalog.schemas`): a folder of
csv files or one workbook, so a load followed by an export round-trips."""

from __future__ import annotations

from pathlib import Path
from typing import Any

from sqlmodel import Session, select

from inventory.catalog.schemas import ORDER, SCHEMAS
from inventory.core.tables import (
    ForkFamily,
    Kit,
    KitLine,
    Location,
    Part,
    Seat,
    Supplier,
    SupplierItem,
)
from inventory.sheets.columns import to_cells
from inventory.sheets.write import SheetSpec, write_csv, write_workbook


def catalog_records(session: Session) -> dict[str, list[dict[str, Any]]]:
    """Every catalog table as records in our column names (what an export writes)."""
    out: dict[str, list[dict[str, Any]]] = {}
    out["locations"] = [{"code": r.code, "description": r.description}
                        for r in session.exec(select(Location).order_by(Location.code))]
    out["parts"] = [r.model_dump(exclude={"id"})
                    for r in session.exec(select(Part).order_by(Part.code))]
    out["suppliers"] = [r.model_dump(exclude={"id"})
                        for r in session.exec(select(Supplier).order_by(Supplier.code))]
    out["supplier_items"] = [
        {"supplier": sup, "part": part, **si.model_dump(exclude={"id", "supplier_id", "part_id"})}
        for si, sup, part in session.exec(
            select(SupplierItem, Supplier.code, Part.code)
            .join(Supplier, Supplier.id == SupplierItem.supplier_id)
            .join(Part, Part.id == SupplierItem.part_id)
            .order_by(Supplier.code, Part.code))
    ]
    out["fork_families"] = [r.model_dump(exclude={"id"})
                            for r in session.exec(select(ForkFamily).order_by(ForkFamily.code))]
    out["seats"] = [
        {"fork": fam, "seat": seat.code, **seat.model_dump(exclude={"id", "fork_family_id", "code"})}
        for seat, fam in session.exec(
            select(Seat, ForkFamily.code).join(ForkFamily, ForkFamily.id == Seat.fork_family_id)
            .order_by(ForkFamily.code, Seat.code))
    ]
    out["kits"] = [
        {"kit": code, "fork": fam, "service_level": kit.service_level,
         "description": kit.description}
        for kit, code, fam in session.exec(
            select(Kit, Part.code, ForkFamily.code).join(Part, Part.id == Kit.part_id)
            .join(ForkFamily, ForkFamily.id == Kit.fork_family_id).order_by(Part.code))
    ]
    kit_part = Part.__table__.alias("kit_part")
    out["kit_lines"] = [
        {"kit": kcode, "part": pcode, "qty": qty}
        for kcode, pcode, qty in session.exec(
            select(kit_part.c.code, Part.code, KitLine.qty)
            .join(Kit, Kit.id == KitLine.kit_id)
            .join(kit_part, kit_part.c.id == Kit.part_id)
            .join(Part, Part.id == KitLine.part_id)
            .order_by(kit_part.c.code, Part.code))
    ]
    return out


def export_catalog(session: Session, target: str | Path) -> list[Path]:
    """Write the catalog to a folder of csv files or to one ``.xlsx`` workbook."""
    target = Path(target)
    records = catalog_records(session)
    if target.suffix.lower() == ".xlsx":
        sheets = [SheetSpec(t, SCHEMAS[t].header, to_cells(SCHEMAS[t], records[t])) for t in ORDER]
        return [write_workbook(target, sheets)]
    target.mkdir(parents=True, exist_ok=True)
    return [write_csv(target / f"{t}.csv", SCHEMAS[t].header, to_cells(SCHEMAS[t], records[t]))
            for t in ORDER]
