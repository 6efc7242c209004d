"""What the bench commands (``match``, ``fit``, ``compat``, ``parts find``) compute, without
printing: the shop's parts and stock read once from the store, then handed to the pure core
(:mod:`inventory.bench.matching`, :mod:`inventory.bench.fit`).

Stock candidates carry their on-hand quantity and locations (summed from the movements by
:mod:`inventory.bench.stock_read`, without the stock package, which sits above the bench) and
the units in lots past their ISO 2230 storage period (REFERENCE.md 5: counted from the end
of the cure quarter; a lot inspected and extended is good until its ``extended_until``).
Standard sizes are "orderable, not stocked".
"""

from __future__ import annotations

import weakref
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from datetime import date
from pathlib import Path
from typing import TYPE_CHECKING

from sqlmodel import Session, select

from inventory.bench.fit import CAUTION, FitResult, FitRules, fit, kind_applies

# the faces read their input through this module (svc.parse_dim, ...): re-exported
from inventory.bench.inputs import NOT_BENCH_KINDS as NOT_BENCH_KINDS
from inventory.bench.inputs import check_hardness as check_hardness
from inventory.bench.inputs import hardness_rules as hardness_rules
from inventory.bench.inputs import parse_dim as parse_dim
from inventory.bench.inputs import parse_kind as parse_kind
from inventory.bench.inputs import parse_material as parse_material
from inventory.bench.inputs import parse_tolerance as parse_tolerance
from inventory.bench.matching import (
    Candidate,
    MatchQuery,
    MatchTolerance,
    PartArrays,
    match,
    parts_fitting,
    standard_part_arrays,
)
from inventory.bench.seals import usual_medium_status
from inventory.bench.sizes import normalise_designation
from inventory.bench.stock_read import StockInfo, StockOnDemand
from inventory.core import lookup
from inventory.core.convert import all_seats, part_spec, seat_spec
from inventory.core.errors import InventoryError
from inventory.core.model import PartKind, PartSpec, SeatSpec
from inventory.core.tables import Part

if TYPE_CHECKING:  # the workbook writer imports openpyxl: loaded by compat_matrix only
    from inventory.bench.compat import CompatReport

#: Kinds the standard O-ring series can stand in for.
RING_KINDS = frozenset({PartKind.O_RING, PartKind.X_RING})
ORDERABLE = "orderable, not stocked"


# ------------------------------------------------------------------------- the shop

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


def find_seat(session: Session, fork: str | None, seat: str | None) -> SeatSpec | None:
    """The seat named by ``--fork F --seat S`` (both or neither), suggestions for typos."""
    if fork is None and seat is None:
        return None
    if fork is None:
        raise InventoryError("--seat needs --fork", hint="give both, e.g. --fork XC-32 "
                                                        "--seat air_piston_seal")
    if seat is None:
        codes = [s.seat for s in all_seats(session) if s.fork == lookup.fork(session, fork).code]
        raise InventoryError(f"--fork {fork} needs --seat",
                             hint=f"seats: {', '.join(codes)}" if codes else None)
    fam, row = lookup.seat(session, fork, seat)
    return seat_spec(row, fam.code)


def resolve_part(session: Session, code: str) -> PartSpec:
    """A shop part by code, else a standard size by designation (``AS568-214``,
    ``ISO3601 31.5x3.55``); unknown -> the shop's closest codes suggested."""
    try:
        return part_spec(lookup.part(session, code))
    except InventoryError as exc:
        arrays = standard_part_arrays()
        hits = [i for i, c in enumerate(arrays.codes) if c == normalise_designation(code)]
        if hits:
            return arrays.spec(hits[0])
        raise exc from None


# --------------------------------------------------------------------------- match

@dataclass(frozen=True)
class MatchRequest:
    """One ``inventory match``: measured dimensions (or none, with a seat), options."""

    query: MatchQuery
    tolerance: MatchTolerance = MatchTolerance()
    limit: int | None = None  # per source; None: 6 with dimensions, all without
    seat: SeatSpec | None = None
    reference_shore_a: float | None = None
    rules: FitRules = FitRules()
    standard: bool = True


DEFAULT_LIMIT = 6


@dataclass(frozen=True)
class MatchResult:
    rows: list[dict]
    mode: str  # "match" (ranked by score) or "fitting" (every part that fits the seat)
    request: MatchRequest

    def to_dict(self) -> dict:
        q = self.request.query
        seat = self.request.seat
        return {
            "query": {"id_mm": q.id_mm, "od_mm": q.od_mm, "height_mm": q.height_mm,
                      "cs_mm": q.cs_mm, "kind": str(q.kind) if q.kind else None,
                      "material": q.material,
                      "hardness_shore_a": self.request.reference_shore_a},
            "seat": {"fork": seat.fork, "seat": seat.seat} if seat else None,
            "mode": self.mode,
            "candidates": self.rows,
            "caution": CAUTION,
        }


def _row(spec: PartSpec, source: str, shop: Shop, req: MatchRequest, *,
         candidate: Candidate | None = None, verdict: str | None = None,
         stocked_as: Sequence[str] = ()) -> dict:
    """One candidate as the JSON contract has it (absent dimensions as null)."""
    if candidate is not None:
        d = candidate.to_dict()
    else:
        d = {"source": source, "kind": str(spec.kind), "id_mm": spec.id_mm,
             "od_mm": spec.od_mm, "height_mm": spec.height_mm, "cs_mm": spec.cs_mm,
             "score": None, "parts": {}, "driver": None}
        d["designation" if source == "standard" else "part"] = spec.code
    out = {"source": d["source"]}
    out["designation" if source == "standard" else "part"] = spec.code
    out["kind"] = d["kind"]
    for key in ("id_mm", "od_mm", "height_mm", "cs_mm"):  # as recorded: absent is null
        value = getattr(spec, key)
        out[key] = None if value is None else round(float(value), 4)
    out["score"] = None if d["score"] is None else round(float(d["score"]), 4)
    out["driver"] = d["driver"]
    out["parts"] = {k: round(v, 4) for k, v in d["parts"].items()}
    out["material"] = spec.material
    out["hardness_shore_a"] = spec.hardness_shore_a
    if source == "stock":
        info = shop.stock_of(spec.code)
        out["on_hand"] = info.on_hand
        out["location"] = info.location
        out["past_storage"] = info.past_storage > 0
        out["past_storage_units"] = info.past_storage
        out["status"] = "on hand" if info.on_hand else "none on hand"
    else:
        out["status"] = ORDERABLE
        if stocked_as:
            out["stocked_as"] = list(stocked_as)
    ref = req.reference_shore_a
    if ref is not None:
        h = spec.hardness_shore_a
        limit = req.rules.hardness
        out["hardness_ok"] = None if h is None else bool(limit.low <= h - ref <= limit.high)
    v = verdict if verdict is not None else d.get("verdict")
    if v is not None:
        out["verdict"] = v
    return out


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
    if req.standard and (kind is None or kind in RING_KINDS):
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
                rows.append(_row(spec, arrays.source, shop, req, verdict=verdict,
                                 stocked_as=stocked.get(spec.code, ())))
        order = {"pass": 0, "marginal": 1}
        rows.sort(key=lambda r: (order[r["verdict"]], r["source"] != "stock"))
        return MatchResult(rows, "fitting", req)
    limit = DEFAULT_LIMIT if req.limit is None else req.limit
    ranked: list[tuple] = []
    for arrays in _sources(shop, req, kind):
        try:
            found = match(req.query, arrays, tolerance=req.tolerance, limit=limit,
                          seat=req.seat, rules=req.rules,
                          reference_shore_a=req.reference_shore_a)
        except ValueError as exc:
            raise InventoryError(str(exc)) from None
        for c in found:
            spec = arrays.spec(c.index)
            row = _row(spec, arrays.source, shop, req, candidate=c,
                       stocked_as=stocked.get(c.code, ()))
            ranked.append((_rank_group(row, spec, req), c.score, arrays.source != "stock",
                           len(ranked), row))
    ranked.sort(key=lambda t: t[:4])
    return MatchResult([t[4] for t in ranked], "match", req)


_VERDICT_RANK = {"pass": 0, "marginal": 1, "fail": 2, "n/a": 3}


def _rank_group(row: dict, spec: PartSpec, req: MatchRequest) -> int:
    """What ranks before the score. With a seat: its verdict, pass before marginal before
    fail. Without one: a polymer that does not suit the usual medium of its kind
    (:func:`~inventory.bench.seals.usual_medium_status`) is marked in the row and, unless
    that material was asked for, ranked after the others."""
    if req.seat is not None:
        return _VERDICT_RANK.get(row.get("verdict", "n/a"), 3)
    status, why = usual_medium_status(PartKind(spec.kind), spec.material)
    row["material_status"] = status
    if why:
        row["material_note"] = why
    return int(status == "fail" and req.query.material is None)


# ----------------------------------------------------------------------------- fit

def fit_everywhere(part: PartSpec, seats: Sequence[SeatSpec], *, rules: FitRules = FitRules(),
                   reference_shore_a: float | None = None,
                   include_fail: bool = False) -> list[FitResult]:
    """The fit of ``part`` in every seat its kind goes in: passes, then marginals (and
    failures when asked), each by fork and seat."""
    out = [fit(part, s, rules=rules, reference_shore_a=reference_shore_a)
           for s in seats if kind_applies(part.kind, s.part_kind, rules=rules)]
    if not include_fail:
        out = [r for r in out if str(r.verdict) != "fail"]
    order = {"pass": 0, "marginal": 1, "fail": 2}
    return sorted(out, key=lambda r: (order[str(r.verdict)], r.fork, r.seat))


# ------------------------------------------------------------ kept in memory (web app)

def match_request(session: Session, *, kind: str | None = None, id_: str | None = None,
                  od: str | None = None, height: str | None = None, cs: str | None = None,
                  tol: str | None = None, material: str | None = None,
                  hardness: float | None = None, hardness_tol: float | None = None,
                  fork: str | None = None, seat: str | None = None, limit: int | None = None,
                  standard: bool = True, unit: str = "mm") -> MatchRequest:
    """The :class:`MatchRequest` for typed readings, parsed exactly as ``inventory match``
    parses its options (errors name the option, e.g. ``--cs: ...``)."""
    if limit is not None and limit < 1:
        raise InventoryError(f"--limit must be 1 or more, got {limit}")
    seat_spec = find_seat(session, fork, seat)
    wanted = parse_kind(kind) or (PartKind(seat_spec.part_kind) if seat_spec else None)
    query = MatchQuery(
        id_mm=parse_dim(id_, "id", wanted, unit=unit),
        od_mm=parse_dim(od, "od", wanted, unit=unit),
        height_mm=parse_dim(height, "height", wanted, unit=unit),
        cs_mm=parse_dim(cs, "cs", wanted, unit=unit),
        kind=wanted, material=parse_material(material))
    rules = hardness_rules(FitRules(), hardness_tol)
    return MatchRequest(query, parse_tolerance(tol, unit=unit), limit, seat_spec,
                        check_hardness(hardness), rules, standard=standard)


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


def fork_code(session: Session, text: str) -> str:
    """The fork family code for ``text`` (its code, any case); unknown -> one line with the
    closest codes."""
    return lookup.fork(session, text).code


# ------------------------------------------------------- fit, compat, parts find (faces)

@dataclass(frozen=True, slots=True)
class FitEverywhere:
    """``fit PART`` without a seat: the seats of its kind (in the fork family asked for)
    it fits, and how many seats were checked."""

    part: str
    results: list[FitResult]
    seats_checked: int


def fit_part(session: Session, part: str, *, fork: str | None = None, seat: str | None = None,
             rules: FitRules = FitRules(), reference_shore_a: float | None = None,
             include_fail: bool = False) -> FitResult | FitEverywhere:
    """Will ``part`` work? With ``seat`` (and ``fork``): every check in that seat. Without:
    every seat of its kind where it fits (in ``fork`` only, when given)."""
    spec = resolve_part(session, part)
    if seat is not None:
        target = find_seat(session, fork, seat)
        assert target is not None
        return fit(spec, target, rules=rules, reference_shore_a=reference_shore_a)
    seats = all_seats(session)
    if fork is not None:
        code = fork_code(session, fork)
        seats = [x for x in seats if x.fork == code]
    applicable = [x for x in seats if kind_applies(spec.kind, x.part_kind, rules=rules)]
    results = fit_everywhere(spec, applicable, rules=rules, reference_shore_a=reference_shore_a,
                             include_fail=include_fail)
    return FitEverywhere(spec.code, results, len(applicable))


def compat_matrix(session: Session, *, kind: str | None = None, standard: bool = False,
                  xlsx: str | Path | None = None) -> tuple[CompatReport, Path | None]:
    """Every seat against every part of a kind that goes there (``kind``: one seal kind
    only; ``standard``: the standard O-ring series as more columns), and the workbook
    written to ``xlsx`` when given (its path, else None)."""
    from inventory.bench.compat import build_compat, write_compat

    wanted = parse_kind(kind)
    shop = load_shop(session)
    seats = all_seats(session)
    sources: list[PartArrays] = [shop.arrays]
    if standard:
        sources.append(standard_part_arrays())
    report = build_compat(seats, sources, kinds=None if wanted is None else [wanted])
    if wanted is not None and not report.blocks:
        raise InventoryError(f"no {wanted} seats on file")
    return report, None if xlsx is None else write_compat(report, xlsx)


def find_parts(session: Session, query: str, *, limit: int = 10,
               unit: str = "mm") -> list[dict]:
    """Fuzzy search over part codes, descriptions and dimensions, best first: each hit with
    its kind, dimensions (mm) and stock (read for the hits only)."""
    from inventory.bench.part_search import find_parts as search

    shop = load_shop(session)
    try:
        hits = search(query, shop.parts, limit=limit, default_unit=unit)
    except ValueError as exc:
        raise InventoryError(str(exc)) from None
    out = []
    for h in hits:
        p = shop.parts[h.index]
        info = shop.stock_of(p.code)
        out.append({**h.to_dict(), "kind": str(p.kind), "description": p.description,
                    "id_mm": p.id_mm, "od_mm": p.od_mm, "height_mm": p.height_mm,
                    "cs_mm": p.cs_mm, "on_hand": info.on_hand, "location": info.location})
    return out
