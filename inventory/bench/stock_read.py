"""Stock of the parts a bench lookup shows, by one SQL read of the ledger's movements.

The bench sits below the stock package in the layers, so it sums the movements itself
(per part, location and lot, the same grouping as :func:`inventory.stock.ledger.on_hand`)
instead of importing the ledger. Units in lots past their ISO 2230 storage period
(REFERENCE.md 5: counted from the end of the cure quarter; a lot inspected and extended is
good until its ``extended_until``) are counted per part.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from datetime import date

from sqlalchemy import func
from sqlmodel import Session, col, select

from inventory.bench.seals import is_past_storage_limit
from inventory.core.model import PartSpec
from inventory.core.tables import Location, Lot, Movement, Part


@dataclass(frozen=True, slots=True)
class StockInfo:
    """Stock of one part: on hand, by location (largest first), units past storage."""

    on_hand: int = 0
    locations: tuple[tuple[str, int], ...] = ()
    past_storage: int = 0
    lots_past: tuple[str, ...] = ()

    @property
    def location(self) -> str | None:
        return ", ".join(loc for loc, _ in self.locations) or None


def lot_past_storage(cured: str | None, material: str | None, on: date, *,
                     extended_until: date | None = None) -> bool:
    """True when a lot is past its ISO 2230 storage period on ``on``. A lot inspected and
    extended is good until ``extended_until``; lots without a cure quarter, plastics,
    metals and unknown materials are never flagged."""
    if not cured or not material:
        return False
    if extended_until is not None:
        return on > extended_until
    try:
        return is_past_storage_limit(cured, material, on)
    except ValueError:
        return False


def stock_infos(session: Session, specs: Mapping[str, PartSpec], *, on: date,
                codes: Sequence[str] | None = None) -> dict[str, StockInfo]:
    """On hand, locations and units past storage of the parts ``codes`` (None: every part
    with stock), the movements summed per part, location and lot in one query. Parts with
    nothing on hand are left out."""
    qty = func.sum(Movement.qty)
    q = (select(Part.code, Location.code, Lot.code, Lot.cured, Lot.extended_until, qty)
         .join(Part, col(Part.id) == Movement.part_id)
         .join(Location, col(Location.id) == Movement.location_id)
         .join(Lot, col(Lot.id) == Movement.lot_id))
    if codes is not None:
        q = q.where(col(Part.code).in_(list(codes)))
    q = (q.group_by(Part.code, Location.code, Lot.code, Lot.cured, Lot.extended_until)
         .having(qty != 0)
         .order_by(Part.code, Location.code, Lot.code, Lot.cured))
    acc: dict[str, dict] = {}
    for part, loc, lot, cured, until, n in session.exec(q):
        n = int(n)
        if n <= 0:
            continue
        a = acc.setdefault(part, {"n": 0, "loc": {}, "past": 0, "lots": []})
        a["n"] += n
        a["loc"][loc] = a["loc"].get(loc, 0) + n
        spec = specs.get(part)
        if spec and lot_past_storage(cured, spec.material, on, extended_until=until):
            a["past"] += n
            a["lots"].append(lot)
    return {
        code: StockInfo(a["n"], tuple(sorted(a["loc"].items(), key=lambda kv: (-kv[1], kv[0]))),
                        a["past"], tuple(dict.fromkeys(a["lots"])))
        for code, a in acc.items()
    }


def stock_by_part(session: Session, specs: dict[str, PartSpec], *,
                  on: date, part: str | None = None) -> dict[str, StockInfo]:
    """On hand (from the movements), locations and units past storage for every part (or
    for the one ``part``)."""
    return stock_infos(session, specs, on=on, codes=None if part is None else [part])


class StockOnDemand(dict):
    """Stock per part code, read the first time a code is asked for (a search shows a
    handful of candidates; summing the whole ledger per search is waste)."""

    probing = False  # True: record the codes asked for, answer "none" (see ShopCache.match)
    asked: list[str]

    def __init__(self, session: Session, specs: Mapping[str, PartSpec], on: date) -> None:
        super().__init__()
        self._session, self._specs, self._on = session, specs, on
        self.asked = []

    def get(self, code, default=None):  # noqa: D401 - dict API
        if self.probing:
            self.asked.append(code)
            return StockInfo()
        if code not in self:
            self.fill([code])
        return dict.get(self, code, default)

    def fill(self, codes: Sequence[str]) -> None:
        """Stock of ``codes`` in one query; codes that are not bench parts have none."""
        wanted = [c for c in dict.fromkeys(codes) if c not in self]
        known = [c for c in wanted if c in self._specs]
        found = stock_infos(self._session, self._specs, on=self._on, codes=known) if known else {}
        for code in wanted:
            self[code] = found.get(code, StockInfo())
