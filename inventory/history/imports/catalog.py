"""``inventory import catalog``: part updates, one row per part. A new part is created; for a
known part the cells given change its fields (blank cells leave a field as it is)."""

from __future__ import annotations

from typing import Any

from sqlalchemy import func
from sqlmodel import Session, select

from inventory.core.model import PartKind
from inventory.core.tables import Movement, Part, StockBalance
from inventory.history.imports.report import Unit
from inventory.history.imports.steps import Context, per_row, row_units
from inventory.sheets.kinds import CATALOG
from inventory.sheets.rows import TypedRows

PART_FIELDS = ("kind", "description", "id_mm", "od_mm", "height_mm", "cs_mm", "material",
               "hardness", "volume_cm3", "unit", "standard", "notes")


def build(ctx: Context, typed: TypedRows) -> list[Unit]:
    present = [c.name for c in CATALOG.columns if c.name in ctx.hmap.matches]
    units = row_units(ctx, typed, present)
    seen: dict[str, int] = {}
    for u in units:
        v = u.payload
        code = v.get("code")
        if not code:
            continue
        if code.upper() in seen:
            ctx.problem(u.rows[0].row, "code", f"part {code} appears twice (first on row "
                        f"{seen[code.upper()]})", kind="conflict")
            u.status = "invalid"
            continue
        seen[code.upper()] = u.rows[0].row
        if ctx.index.part(code) is None and not v.get("kind"):
            ctx.problem(u.rows[0].row, "kind" if "kind" in ctx.hmap.matches else "code",
                        f"new part {code} needs a kind",
                        hint=f"kinds are {', '.join(PartKind)}")
            u.status = "invalid"
        u.payload = {k: v.get(k) for k in present}
    if "kind" in present or "unit" in present:
        _keep_stocked(ctx, units)
    return units


def _keep_stocked(ctx: Context, units: list[Unit]) -> None:
    """A part with stock movements keeps its kind and unit: re-typing an O-ring with 36 on
    the shelf as oil in ml would change what every movement of it means. The change is an
    error at its cell, and the row writes nothing."""
    known = {u.payload["code"]: ctx.index.part(u.payload["code"]) for u in units
             if u.status == "new" and u.payload.get("code")}
    ids = [p.id for p in known.values() if p is not None]
    if not ids:
        return
    stocked: dict[int, tuple[str, str, int]] = {}
    session = ctx.session
    for i in range(0, len(ids), 500):
        chunk = ids[i:i + 500]
        moved = set(session.exec(select(Movement.part_id).where(
            Movement.part_id.in_(chunk)).distinct()))
        if not moved:
            continue
        held = dict(session.exec(
            select(StockBalance.part_id, func.coalesce(func.sum(StockBalance.qty), 0))
            .where(StockBalance.part_id.in_(moved)).group_by(StockBalance.part_id)).all())
        for pid, kind, unit in session.exec(select(Part.id, Part.kind, Part.unit)
                                            .where(Part.id.in_(moved))):
            stocked[pid] = (str(kind), str(unit), int(held.get(pid, 0)))
    for u in units:
        part = known.get(u.payload.get("code")) if u.status == "new" else None
        if part is None or part.id not in stocked:
            continue
        kind, unit, on_hand = stocked[part.id]
        for name, now in (("kind", kind), ("unit", unit)):
            given = u.payload.get(name)
            if given is None or str(given) == now:
                continue
            ctx.problem(u.rows[0].row, name,
                        f"part {part.code} has stock movements ({on_hand} {unit} on hand): "
                        f"{name} {str(given)!r} would change it, expected {now!r}",
                        kind="conflict", hint="a part with stock keeps its kind and unit: "
                        "give the new item its own part code")
            u.status = "invalid"


def run(ctx: Context, units: list[Unit]) -> None:
    def effect(u: Unit) -> str:
        return update_part(ctx.session, u.payload)

    ctx.report.effects = per_row(ctx, units, effect, order_by_day=False)


def update_part(session: Session, values: dict[str, Any]) -> str:
    """Create a part or change the fields given (blank cells leave a field as it is).
    Returns ``created``, ``updated`` or ``unchanged``."""
    code = values["code"]
    part = session.exec(select(Part).where(Part.code == code)).first() or session.exec(
        select(Part).where(Part.code == code.upper())).first()
    given = {k: v for k, v in values.items() if k in PART_FIELDS and v is not None}
    if part is None:
        part = Part(code=code, kind=str(given.pop("kind")), **{
            k: (str(v) if k == "unit" else v) for k, v in given.items()})
        session.add(part)
        session.flush()
        return "created"
    changed = False
    for k, v in given.items():
        v = str(v) if k in ("kind", "unit") else v
        if getattr(part, k) != v:
            setattr(part, k, v)
            changed = True
    if changed:
        session.add(part)
        session.flush()
        return "updated"
    return "unchanged"
