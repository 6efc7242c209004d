"""What the bench commands (``match``, ``fit``, ``compat``, ``parts find``) compute, without
printing: the faces' one door to the bench. Light to import (no numpy, no database
library): each function loads what it needs when it runs.

``inventory match`` with readings only is answered by the database
(:func:`match_readings`: plain SQL, :mod:`inventory.bench.match_sql`); with a seat, and in
the web app, the shop's parts are scored as arrays (:mod:`inventory.bench.match_run`, names
re-exported here). Both give the same rows (:mod:`inventory.bench.match_rows`).
"""

from __future__ import annotations

import importlib
from collections.abc import Sequence
from dataclasses import dataclass
from datetime import date
from pathlib import Path
from typing import TYPE_CHECKING, Any

from inventory.bench.fit_limits import FitRules as FitRules

# the faces read their input through this module (svc.parse_dim, ...): re-exported
from inventory.bench.inputs import NOT_BENCH_KINDS as NOT_BENCH_KINDS
from inventory.bench.inputs import check_hardness as check_hardness
from inventory.bench.inputs import hardness_rules as hardness_rules
from inventory.bench.inputs import parse_dim as parse_dim
from inventory.bench.inputs import parse_kind as parse_kind
from inventory.bench.inputs import parse_material as parse_material
from inventory.bench.inputs import parse_tolerance as parse_tolerance
from inventory.bench.match_query import CAUTION as CAUTION
from inventory.bench.match_query import MatchQuery as MatchQuery
from inventory.bench.match_rows import DEFAULT_LIMIT as DEFAULT_LIMIT
from inventory.bench.match_rows import ORDERABLE as ORDERABLE
from inventory.bench.match_rows import RING_KINDS as RING_KINDS
from inventory.bench.match_rows import MatchRequest as MatchRequest
from inventory.bench.match_rows import MatchResult as MatchResult
from inventory.bench.match_rows import StockInfo as StockInfo
from inventory.core.errors import InventoryError
from inventory.core.model import PartKind, PartSpec, SeatSpec

if TYPE_CHECKING:
    from sqlmodel import Session

    from inventory.bench.compat import CompatReport
    from inventory.bench.fit import FitResult
    from inventory.core.sqlread import Reader

#: Names kept in modules that load numpy or SQLAlchemy, re-exported on first use.
_LATER = {"Shop": "match_run", "ShopCache": "match_run", "load_shop": "match_run",
          "run_match": "match_run", "StockOnDemand": "stock_read", "FitResult": "fit", "fit": "fit",
          "sheet_title": "compat"}


def __getattr__(name: str) -> Any:
    if name in _LATER:
        return getattr(importlib.import_module(f"inventory.bench.{_LATER[name]}"), name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


# --------------------------------------------------------------------------- match

@dataclass(frozen=True)
class MatchForm:
    """The readings and options of one search as typed (``inventory match``'s options, the
    web form's fields): texts, parsed by :func:`match_request`."""

    id_: str | None = None
    od: str | None = None
    height: str | None = None
    cs: str | None = None
    kind: str | None = None
    material: str | None = None
    tol: str | None = None
    hardness: float | None = None
    hardness_tol: float | None = None
    fork: str | None = None
    seat: str | None = None
    limit: int | None = None
    standard: bool = True
    unit: str = "mm"

    @property
    def has_seat(self) -> bool:
        return self.fork is not None or self.seat is not None


def match_request(session: Session | None, form: MatchForm) -> MatchRequest:
    """The :class:`MatchRequest` for typed readings, parsed exactly as ``inventory match``
    parses its options (errors name the option, e.g. ``--cs: ...``). ``session`` is needed
    only to look up a seat (``form.fork``/``form.seat``)."""
    if form.limit is not None and form.limit < 1:
        raise InventoryError(f"--limit must be 1 or more, got {form.limit}")
    seat_spec = None
    if form.has_seat:
        assert session is not None, "a seat is looked up in the database"
        seat_spec = find_seat(session, form.fork, form.seat)
    unit = form.unit
    wanted = parse_kind(form.kind) or (PartKind(seat_spec.part_kind) if seat_spec else None)
    query = MatchQuery(
        id_mm=parse_dim(form.id_, "id", wanted, unit=unit),
        od_mm=parse_dim(form.od, "od", wanted, unit=unit),
        height_mm=parse_dim(form.height, "height", wanted, unit=unit),
        cs_mm=parse_dim(form.cs, "cs", wanted, unit=unit),
        kind=wanted, material=parse_material(form.material))
    rules = hardness_rules(FitRules(), form.hardness_tol)
    return MatchRequest(query, parse_tolerance(form.tol, unit=unit), form.limit, seat_spec,
                        check_hardness(form.hardness), rules, standard=form.standard)


def match_readings(reader: Reader, form: MatchForm, *, on: date | None = None) -> MatchResult:
    """``inventory match`` without a seat, answered by the database through the plain
    reader (no numpy, no ORM); the same rows :func:`match_parts` gives."""
    from inventory.bench.match_sql import match_by_sql

    return match_by_sql(reader, match_request(None, form), on=on)


def match_parts(session: Session, form: MatchForm, *, on: date | None = None) -> MatchResult:
    """``inventory match`` on the shop's parts as arrays: with a seat, each candidate's fit
    verdict; with a seat and no readings, every part that fits it."""
    from inventory.bench.match_run import load_shop, run_match

    req = match_request(session, form)
    return run_match(load_shop(session, on=on), req)


# ----------------------------------------------------------------------------- seats

def find_seat(session: Session, fork: str | None, seat: str | None) -> SeatSpec | None:
    """The seat named by ``--fork F --seat S`` (both or neither), suggestions for typos."""
    from inventory.core import lookup
    from inventory.core.convert import all_seats, seat_spec

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
    from inventory.bench.matching import standard_part_arrays
    from inventory.bench.sizes import normalise_designation
    from inventory.core import lookup
    from inventory.core.convert import part_spec

    try:
        return part_spec(lookup.part(session, code))
    except InventoryError as exc:
        arrays = standard_part_arrays()
        hits = [i for i, c in enumerate(arrays.codes) if c == normalise_designation(code)]
        if hits:
            return arrays.spec(hits[0])
        raise exc from None


def fit_everywhere(part: PartSpec, seats: Sequence[SeatSpec], *, rules: FitRules = FitRules(),
                   reference_shore_a: float | None = None,
                   include_fail: bool = False) -> list[FitResult]:
    """The fit of ``part`` in every seat its kind goes in: passes, then marginals (and
    failures when asked), each by fork and seat."""
    from inventory.bench.fit import fit, kind_applies

    out = [fit(part, s, rules=rules, reference_shore_a=reference_shore_a)
           for s in seats if kind_applies(part.kind, s.part_kind, rules=rules)]
    if not include_fail:
        out = [r for r in out if str(r.verdict) != "fail"]
    order = {"pass": 0, "marginal": 1, "fail": 2}
    return sorted(out, key=lambda r: (order[str(r.verdict)], r.fork, r.seat))


def fork_code(session: Session, text: str) -> str:
    """The fork family code for ``text`` (its code, any case); unknown -> one line with the
    closest codes."""
    from inventory.core import lookup

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
    from inventory.bench.fit import fit, kind_applies
    from inventory.core.convert import all_seats

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
    from inventory.bench.match_run import load_shop
    from inventory.bench.matching import PartArrays, standard_part_arrays
    from inventory.core.convert import all_seats

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
    from inventory.bench.match_run import load_shop
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
