"""``inventory import counts``: shelf counts, one row per part and location, booked through
the ledger on their day (a variance moves stock to what was counted)."""

from __future__ import annotations

from inventory.core.tables import Location
from inventory.history.imports.report import Unit
from inventory.history.imports.steps import Context, check_codes, codes_of, per_row, row_units
from inventory.history.jobs import noon
from inventory.sheets.kinds import CODE_HINT
from inventory.sheets.rows import TypedRows
from inventory.stock import ledger

LOCATION_HINT = "locations are set in the catalog (locations sheet)"


def part_codes(ctx: Context) -> dict[str, str]:
    """Part codes as written and in upper case, to the code as stored."""
    return {c: p.code for c, p in ctx.index.parts.items()} | {
        c: p.code for c, p in ctx.index.parts_upper.items()}


def build(ctx: Context, typed: TypedRows) -> list[Unit]:
    units = row_units(ctx, typed, ("date", "part", "location", "counted"))
    check_codes(ctx, units, "part", part_codes(ctx), "part", CODE_HINT)
    check_codes(ctx, units, "location", codes_of(ctx.session, Location), "location",
                LOCATION_HINT)
    return units


def run(ctx: Context, units: list[Unit]) -> None:
    user, batch_id = ctx.settings.user, ctx.batch_id

    def effect(u: Unit) -> str:
        v = u.payload
        moves = ledger.count(ctx.session, ledger.Count(
            v["part"], v["counted"], location=v["location"], ts=noon(v["date"]).replace(minute=30),
            user=user, reference="COUNT", batch_id=batch_id))
        return "variances" if moves else "agreed"

    ctx.report.effects = per_row(ctx, units, effect, order_by_day=True)
