"""``inventory match`` over the shop's parts held as arrays: read once by SQL
(:mod:`inventory.bench.shop_read`) and scored all at once by :func:`inventory.bench.matching.
match`; the web app keeps them in memory between requests (:class:`ShopCache`). With a seat
the candidates also get their fit verdicts, and without dimensions every part that fits the
seat is listed. The rows are built and ranked by :mod:`inventory.bench.match_rows`, as the
database-filtered search (:mod:`inventory.bench.match_sql`) builds them.
"""

from __future__ import annotations

import weakref
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from datetime import date

from sqlmodel import Session, select

from inventory.bench.inputs import NOT_BENCH_KINDS
from inventory.bench.match_rows import (
    DEFAULT_LIMIT,
    Found,
    MatchRequest,
    MatchResult,
    candidate_row,
    ranked_rows,
)
from inventory.bench.matching import (
    MatchOptions,
    PartArrays,
    match,
    parts_fitting,
    standard_part_arrays,
)
from inventory.bench.sizes import normalise_designation
from inventory.bench.stock_read import StockInfo, StockOnDemand
from inventory.core.errors import InventoryError
from inventory.core.model import PartKind, PartSpec
from inventory.core.tables import Part


@dataclass(frozen=True, eq=False)
class Shop:
    """The shop's matchable parts as arrays, their stock, and the day it was read."""

    parts: Sequence[PartSpec]  # a tuple, or PartRows (records made on demand)
    arrays: PartArrays
    stock: dict[str, StockInfo] = field(default_factory=dict)
    on: date = field(default_factory=date.today)

    def stock_of(self, code: str) -> StockInfo:
        return self.stock.get(code, StockInfo())


def load_shop(session: Session, *, on: date | None = None) -> Shop:
    """The shop's matchable parts read by SQL into arrays (:mod:`inventory.bench.shop_read`:
    no ORM objects); stock, locations and shelf life are summed per candidate shown."""
    from inventory.bench.shop_read import read_part_arrays

    on = on or date.today()
    rows, arrays = read_part_arrays(session, exclude=NOT_BENCH_KINDS)
    return Shop(rows, arrays, StockOnDemand(session, rows.by_code(), on), on)


_STOCKED_AS: weakref.WeakKeyDictionary = weakref.WeakKeyDictionary()


def _stocked_as(shop: Shop) -> dict[str, list[str]]:
    """Standard designation -> the shop's parts stocked as it (kept per parts table, so a
    catalog held in memory between searches is not walked again for every search)."""
    try:
        hit = _STOCKED_AS.get(shop.parts)
    except TypeError:  # a plain tuple of parts cannot be weakly referenced
        hit = None
    if hit is not None:
        return hit
    out: dict[str, list[str]] = {}
    standards = getattr(shop.parts, "standards", None)
    pairs = standards() if standards else ((p.code, p.standard) for p in shop.parts)
    for code, standard in pairs:
        if standard:
            out.setdefault(normalise_designation(standard), []).append(code)
    try:
        _STOCKED_AS[shop.parts] = out
    except TypeError:
        pass
    return out


def _sources(shop: Shop, req: MatchRequest, kind: PartKind | None) -> list[PartArrays]:
    out = [shop.arrays]
    if req.wants_standard(kind):
        out.append(standard_part_arrays())
    return out


def run_match(shop: Shop, req: MatchRequest) -> MatchResult:
    """Rank stock and standard candidates for the measured dimensions (best first, stock
    before standard on a tie), or, with a seat and no dimensions, list every part that
    fits the seat (passes first)."""
    kind = req.query.kind
    stocked = _stocked_as(shop)
    if not req.query.dims():
        if req.seat is None:
            raise InventoryError("give at least one dimension (--id, --od, --height, --cs), "
                                 "or --fork and --seat to list the parts that fit a seat")
        rows = []
        for arrays in _sources(shop, req, PartKind(req.seat.part_kind)):
            hits = parts_fitting(req.seat, arrays, rules=req.rules,
                                 reference_shore_a=req.reference_shore_a)
            if req.limit is not None:
                hits = hits[:req.limit]
            for i, verdict in hits:
                spec = arrays.spec(i)
                fits = Found(spec, arrays.source, verdict=verdict,
                             stocked_as=stocked.get(spec.code, ()))
                rows.append(candidate_row(fits, shop.stock_of(spec.code)
                                          if arrays.source == "stock" else None, req))
        order = {"pass": 0, "marginal": 1}
        rows.sort(key=lambda r: (order[r["verdict"]], r["source"] != "stock"))
        return MatchResult(rows, "fitting", req)
    limit = DEFAULT_LIMIT if req.limit is None else req.limit
    found: list[Found] = []
    for arrays in _sources(shop, req, kind):
        try:
            best = match(req.query, arrays, limit=limit, seat=req.seat, options=MatchOptions(
                tolerance=req.tolerance, rules=req.rules,
                reference_shore_a=req.reference_shore_a))
        except ValueError as exc:
            raise InventoryError(str(exc)) from None
        found += [Found(arrays.spec(c.index), arrays.source, c,
                        stocked_as=stocked.get(c.code, ())) for c in best]
    return MatchResult(ranked_rows(found, shop.stock_of, req), "match", req)


class ShopCache:
    """The shop's matchable parts as arrays, kept in memory between requests and read again
    when the catalog changes (its highest part id or last import differ) or after
    ``max_age`` seconds; stock is read per request for the candidates shown."""

    def __init__(self, max_age: float = 300.0) -> None:
        import threading

        self.max_age = max_age
        self._lock = threading.Lock()
        self._key: tuple | None = None
        self._when = 0.0
        self._parts: Sequence[PartSpec] = ()
        self._arrays: PartArrays | None = None
        self._by_code: Mapping[str, PartSpec] = {}
        self.loads = 0

    @staticmethod
    def _catalog_key(session: Session) -> tuple:
        from sqlalchemy import func

        from inventory.core.tables import ImportBatch

        # two index-only lookups (a count over 100,000 parts would cost more than the search)
        top = session.exec(select(func.max(Part.id))).one()
        batch = session.exec(select(func.max(ImportBatch.id))).one()
        return (top, batch)

    def invalidate(self) -> None:
        with self._lock:
            self._key = None

    def shop(self, session: Session, *, on: date | None = None) -> Shop:
        import time

        on = on or date.today()
        key = self._catalog_key(session)
        with self._lock:
            if (self._arrays is None or key != self._key
                    or time.monotonic() - self._when > self.max_age):
                from inventory.bench.shop_read import read_part_arrays

                rows, self._arrays = read_part_arrays(session, exclude=NOT_BENCH_KINDS)
                self._parts, self._by_code = rows, rows.by_code()
                self._key, self._when = key, time.monotonic()
                self.loads += 1
            parts, arrays, by_code = self._parts, self._arrays, self._by_code
        return Shop(parts, arrays, StockOnDemand(session, by_code, on), on)

    def match(self, session: Session, req: MatchRequest, *, on: date | None = None
              ) -> MatchResult:
        """:func:`run_match` on the cached arrays, with the stock of every candidate read in
        one query: a first pass finds the candidates, the second gives them their stock
        (ranking does not depend on stock)."""
        shop = self.shop(session, on=on)
        stock = shop.stock
        assert isinstance(stock, StockOnDemand)
        stock.asked, stock.probing = [], True
        try:
            run_match(shop, req)
        finally:
            stock.probing = False
        stock.fill(stock.asked)
        return run_match(shop, req)
