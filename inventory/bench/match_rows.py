"""What ``inventory match`` asks and answers, without numpy or a database library: the
request, the result, one candidate as its JSON row, and the order the rows are shown in.
Both ways of finding the candidates (arrays kept in memory, :mod:`inventory.bench.match_run`;
rows filtered by the database, :mod:`inventory.bench.match_sql`) build their rows here.

Stock candidates carry their on-hand quantity and locations and the units in lots past
their ISO 2230 storage period (REFERENCE.md 5: counted from the end of the cure quarter; a
lot inspected and extended is good until its ``extended_until``). Standard sizes are
"orderable, not stocked".
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from datetime import date

from inventory.bench.fit_limits import FitRules
from inventory.bench.match_query import CAUTION, Candidate, MatchQuery, MatchTolerance
from inventory.bench.seals import is_past_storage_limit, usual_medium_status
from inventory.core.model import PartKind, PartSpec, SeatSpec

#: Kinds the standard O-ring series can stand in for.
RING_KINDS = frozenset({PartKind.O_RING, PartKind.X_RING})
ORDERABLE = "orderable, not stocked"
DEFAULT_LIMIT = 6


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

    def wants_standard(self, kind: PartKind | None) -> bool:
        """Whether the standard O-ring series is searched for parts of ``kind``."""
        return self.standard and (kind is None or kind in RING_KINDS)


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


@dataclass(frozen=True, slots=True)
class Found:
    """One candidate found by a source, before it becomes a row: the part, where it comes
    from, its score breakdown (a ranked search) or its verdict (parts that fit a seat)."""

    spec: PartSpec
    source: str  # "stock" or "standard"
    candidate: Candidate | None = None
    verdict: str | None = None
    stocked_as: Sequence[str] = ()


def candidate_row(found: Found, stock: StockInfo | None, req: MatchRequest) -> dict:
    """One candidate as the JSON contract has it (absent dimensions as null); ``stock`` is
    the part's stock (stock candidates only)."""
    spec, source = found.spec, found.source
    if found.candidate is not None:
        d = found.candidate.to_dict()
    else:
        d = {"source": source, "kind": str(spec.kind), "score": None, "parts": {},
             "driver": None}
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
        info = stock or StockInfo()
        out["on_hand"] = info.on_hand
        out["location"] = info.location
        out["past_storage"] = info.past_storage > 0
        out["past_storage_units"] = info.past_storage
        out["status"] = "on hand" if info.on_hand else "none on hand"
    else:
        out["status"] = ORDERABLE
        if found.stocked_as:
            out["stocked_as"] = list(found.stocked_as)
    ref = req.reference_shore_a
    if ref is not None:
        h = spec.hardness_shore_a
        limit = req.rules.hardness
        out["hardness_ok"] = None if h is None else bool(limit.low <= h - ref <= limit.high)
    v = found.verdict if found.verdict is not None else d.get("verdict")
    if v is not None:
        out["verdict"] = v
    return out


_VERDICT_RANK = {"pass": 0, "marginal": 1, "fail": 2, "n/a": 3}


def rank_group(row: dict, spec: PartSpec, req: MatchRequest) -> int:
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


def ranked_rows(found: Sequence[Found], stock_of, req: MatchRequest) -> list[dict]:
    """The rows of a ranked search (``found``: each source's best, in source order), shown
    by rank group, then score, stock before standard, then as found. ``stock_of(code)``
    gives a stock candidate's :class:`StockInfo`."""
    ranked: list[tuple] = []
    for f in found:
        assert f.candidate is not None
        row = candidate_row(f, stock_of(f.spec.code) if f.source == "stock" else None, req)
        ranked.append((rank_group(row, f.spec, req), f.candidate.score, f.source != "stock",
                       len(ranked), row))
    ranked.sort(key=lambda t: t[:4])
    return [t[4] for t in ranked]
