"""Stock on hand read from the ledger: per part, location and (optionally) lot, summed in SQL;
and the check that the cached balance rows agree with the movements."""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime
from decimal import Decimal

from sqlalchemy import func
from sqlmodel import Session, select

from inventory.core import lookup
from inventory.core.tables import Location, Lot, Movement, Part, StockBalance


def on_hand_at(session: Session, part: Part, location: Location | None = None) -> int:
    q = select(func.coalesce(func.sum(StockBalance.qty), 0)).where(StockBalance.part_id == part.id)
    if location is not None:
        q = q.where(StockBalance.location_id == location.id)
    return int(session.exec(q).one())


@dataclass(frozen=True, slots=True)
class StockLine:
    part: str
    location: str
    on_hand: int
    value: Decimal
    lot: str | None = None
    cured: str | None = None

    def to_dict(self) -> dict:
        d = {"part": self.part, "location": self.location, "on_hand": self.on_hand,
             "value": str(self.value)}
        if self.lot is not None:
            d.update(lot=self.lot, cured=self.cured)
        return d


def on_hand(session: Session, *, part: str | None = None, location: str | None = None,
            by_lot: bool = False, as_of: datetime | None = None) -> list[StockLine]:
    """Stock on hand summed from the ledger in SQL (not from the cached balances)."""
    qty = func.sum(Movement.qty)
    value = func.sum(Movement.qty * Movement.unit_cost)
    cols = [Part.code, Location.code]
    if by_lot:
        cols += [Lot.code, Lot.cured]
    q = (
        select(*cols, qty, value)
        .join(Part, Part.id == Movement.part_id)
        .join(Location, Location.id == Movement.location_id)
    )
    if by_lot:
        q = q.join(Lot, Lot.id == Movement.lot_id)
    if part:
        q = q.where(Movement.part_id == lookup.part(session, part).id)
    if location:
        q = q.where(Movement.location_id == lookup.location(session, location).id)
    if as_of is not None:
        q = q.where(Movement.ts <= as_of)
    q = q.group_by(*cols).having(qty != 0).order_by(*cols)
    out = []
    for row in session.exec(q):
        if by_lot:
            p, loc, lot, cured, n, v = row
        else:
            p, loc, n, v = row
            lot = cured = None
        out.append(StockLine(p, loc, int(n), Decimal(str(v or 0)).quantize(Decimal("0.01")),
                             lot, cured))
    return out


def verify_balances(session: Session) -> list[str]:
    """Differences between the cached balances and the ledger (empty when they agree)."""
    led = dict(
        ((p, loc, lot), int(n))
        for p, loc, lot, n in session.exec(
            select(Movement.part_id, Movement.location_id, Movement.lot_id, func.sum(Movement.qty))
            .group_by(Movement.part_id, Movement.location_id, Movement.lot_id)
        )
    )
    bal = {
        (b.part_id, b.location_id, b.lot_id): b.qty for b in session.exec(select(StockBalance))
    }
    problems = []
    for key in sorted(set(led) | set(bal)):
        a, b = led.get(key, 0), bal.get(key, 0)
        if a != b:
            problems.append(f"part {key[0]} location {key[1]} lot {key[2]}: ledger {a}, cached {b}")
        if a < 0:
            problems.append(f"part {key[0]} location {key[1]} lot {key[2]}: negative ledger {a}")
    return problems
