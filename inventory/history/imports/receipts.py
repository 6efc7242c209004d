"""``inventory import receipts``: deliveries, one row per part and lot, booked through the
ledger on their day. A part's first delivery needs its unit cost."""

from __future__ import annotations

from sqlmodel import select

from inventory.core.tables import Location, Lot, Supplier, SupplierItem
from inventory.history.imports.counts import LOCATION_HINT, part_codes
from inventory.history.imports.report import Unit
from inventory.history.imports.steps import Context, check_codes, codes_of, per_row, row_units
from inventory.history.jobs import noon
from inventory.sheets.kinds import CODE_HINT
from inventory.sheets.rows import TypedRows
from inventory.stock import ledger


def build(ctx: Context, typed: TypedRows) -> list[Unit]:
    units = row_units(ctx, typed, ("date", "supplier", "part", "qty", "unit_cost", "lot",
                                   "cured", "location", "order_ref"))
    check_codes(ctx, units, "part", part_codes(ctx), "part", CODE_HINT)
    check_codes(ctx, units, "location", codes_of(ctx.session, Location), "location",
                LOCATION_HINT)
    check_codes(ctx, units, "supplier", codes_of(ctx.session, Supplier), "supplier",
                "suppliers are set in the catalog (suppliers sheet)")
    costed = set(ctx.session.exec(select(Lot.part_id).distinct())) | set(
        ctx.session.exec(select(SupplierItem.part_id).distinct()))
    for u in units:
        v = u.payload
        if u.status == "new" and v.get("unit_cost") is None:
            part = ctx.index.part(v["part"])
            if part is not None and part.id not in costed:
                ctx.problem(u.rows[0].row, "unit_cost", f"no cost known for {part.code}: "
                            "the unit cost is needed for its first delivery",
                            hint="fill in the unit_cost column")
                u.status = "invalid"
    return units


def run(ctx: Context, units: list[Unit]) -> None:
    user, batch_id = ctx.settings.user, ctx.batch_id

    def effect(u: Unit) -> str:
        v = u.payload
        ledger.receive(ctx.session, ledger.Receipt(
            v["part"], v["qty"], v.get("unit_cost"), lot=v.get("lot"), cured=v.get("cured"),
            location=v["location"], received=v["date"], ts=noon(v["date"]).replace(hour=9),
            reference=v.get("order_ref"), supplier=v.get("supplier"), user=user, batch_id=batch_id))
        return "receipts"

    ctx.report.effects = per_row(ctx, units, effect, order_by_day=True)
