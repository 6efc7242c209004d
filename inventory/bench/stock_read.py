"""Stock of the parts a bench lookup shows, by one SQL read of the ledger's movements.

The bench sits below the stock package in the layers, so it sums the movements itself
(per part, location and lot, the same grouping as :func:`inventory.stock.ledger.on_hand`)
instead of importing the ledger. Units in lots past their ISO 2230 storage period
(REFERENCE.md 5: counted from the end of the cure quarter; a lot inspected and extended is
good until its ``extended_until``) are counted per part.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from datetime import date

from sqlmodel import Session

# one definition of a part's stock and of a lot past storage, shared with the plain reader
from inventory.bench.match_rows import StockInfo as StockInfo
from inventory.bench.match_rows import lot_past_storage as lot_past_storage
from inventory.bench.match_sql import stock_of
from inventory.core.model import PartSpec


def stock_infos(session: Session, specs: Mapping[str, PartSpec], *, on: date,
                codes: Sequence[str] | None = None) -> dict[str, StockInfo]:
    """On hand, locations and units past storage of the parts ``codes`` (None: every part
    with stock), the movements summed per part, location and lot in one query
    (:func:`inventory.bench.match_sql.stock_of`, the plain reader's query too, here in the
    caller's session). Parts with nothing on hand are left out."""
    from inventory.core.sqlread import SessionReader

    return stock_of(SessionReader(session), specs, on,
                    codes=None if codes is None else list(codes))


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
