"""Ranked dimensional search and the seat x part compatibility matrix, over numpy arrays.

A technician measures a worn seal and wants the closest parts. :func:`match` scores every
candidate at once (no Python loop per row) as a sum of named parts, so a rank can be
explained:

- one part per measured dimension: ``|candidate - measured| / tolerance``, where the
  tolerance is ``abs_mm + rel * measured`` (:class:`MatchTolerance`);
- a kind part when the query names a kind, a material part when it names a material
  (:class:`MatchWeights`).

The lowest score ranks first; the dimension with the largest part is the one that drove
the rank. Candidates are a :class:`PartArrays`, built once from the shop's parts or from
the standard O-ring series and reused for every query.

:func:`fit_matrix` computes the verdicts of many parts for many seats with the same rule
code as :func:`inventory.bench.fit.fit` (see :mod:`inventory.bench.fit_rules`).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from functools import lru_cache

import numpy as np

from inventory.bench.fit_checks import kind_status_table
from inventory.bench.fit_columns import PartColumns, columns_from_specs
from inventory.bench.fit_limits import (
    KINDS,
    NOT_APPLICABLE,
    STATUS_NAMES,
    FitRules,
)
from inventory.bench.fit_rules import evaluate, worst

# the query, tolerance, weights and candidate live in the numpy-free module: re-exported
from inventory.bench.match_query import DIMENSIONS as DIMENSIONS
from inventory.bench.match_query import Candidate as Candidate
from inventory.bench.match_query import MatchQuery as MatchQuery
from inventory.bench.match_query import MatchTolerance as MatchTolerance
from inventory.bench.match_query import MatchWeights as MatchWeights
from inventory.bench.match_query import kind_penalty_table, material_penalty_table
from inventory.bench.seals import ROUND_SECTION
from inventory.bench.sizes import StandardRings, standard_orings
from inventory.core.model import PartKind, PartSpec, SeatSpec


@dataclass(frozen=True, eq=False)
class PartArrays:
    """Candidates as columns, built once and reused for every query.

    ``source`` is ``"stock"`` (the shop's parts) or ``"standard"`` (orderable standard
    sizes). ``codes`` are part codes or standard designations.
    """

    codes: np.ndarray
    cols: PartColumns
    source: str = "stock"
    specs: tuple[PartSpec, ...] = ()
    _by_kinds: dict = field(default_factory=dict, repr=False)
    _ranking: dict = field(default_factory=dict, repr=False)
    _penalties: dict = field(default_factory=dict, repr=False)

    def __len__(self) -> int:
        return len(self.codes)

    @classmethod
    def from_specs(cls, specs: Sequence[PartSpec], *, source: str = "stock") -> PartArrays:
        specs = tuple(specs)
        return cls(np.asarray([p.code for p in specs], dtype=object), columns_from_specs(specs),
                   source, specs)

    @classmethod
    def from_standard(cls, rings: StandardRings | None = None) -> PartArrays:
        rings = standard_orings() if rings is None else rings
        specs = tuple(
            PartSpec(code=str(d), kind=PartKind.O_RING, id_mm=float(i), cs_mm=float(c),
                     standard=str(d))
            for d, i, c in zip(rings.designation, rings.id_mm, rings.cs_mm, strict=True)
        )
        return cls.from_specs(specs, source="standard")

    def spec(self, index: int) -> PartSpec:
        return self.specs[index]

    def ranking_column(self, dim: str) -> tuple[np.ndarray, np.ndarray | None]:
        """float32 copy of a dimension column (missing as 0) and the row indices where it is
        missing (or None); built on first use and kept. Indices, not a mask: assigning
        through a few thousand indices is several times faster than a masked copy."""
        if dim not in self._ranking:
            col = getattr(self.cols, f"{dim}_mm")
            missing = np.isnan(col)
            filled = np.where(missing, 0.0, col).astype(np.float32)
            self._ranking[dim] = (filled, np.flatnonzero(missing) if missing.any() else None)
        return self._ranking[dim]

    def penalty_vector(self, key: tuple, build: Callable[[], np.ndarray]) -> np.ndarray:
        """A per-row float32 penalty (kind or material), built once per distinct query value."""
        if key not in self._penalties:
            self._penalties[key] = np.asarray(build(), dtype=np.float32)
        return self._penalties[key]

    def indices_for_kinds(self, kind_codes: tuple[int, ...]) -> np.ndarray:
        """Row indices of parts of the given kind codes (cached per set of kinds)."""
        key = tuple(sorted(kind_codes))
        if key not in self._by_kinds:
            self._by_kinds[key] = np.flatnonzero(np.isin(self.cols.kind, key))
        return self._by_kinds[key]


@lru_cache(maxsize=1)
def standard_part_arrays() -> PartArrays:
    """The AS568 and ISO 3601-1 series as candidates (built once per process)."""
    return PartArrays.from_standard()


# --------------------------------------------------------------------------- matching

def _kind_penalties(kind: PartKind, weights: MatchWeights) -> np.ndarray:
    return np.asarray(kind_penalty_table(kind, weights), dtype=float)


def _material_penalties(material: str, weights: MatchWeights) -> np.ndarray:
    """Penalty per material code; slots UNKNOWN_MATERIAL and NO_MATERIAL (-1) at the end."""
    return np.asarray(material_penalty_table(material, weights), dtype=float)


def _score_columns(query: MatchQuery, cols: PartColumns, tolerance: MatchTolerance,
                   weights: MatchWeights) -> dict[str, np.ndarray]:
    """Named score parts (float64) for the rows in ``cols``: the exact breakdown."""
    parts: dict[str, np.ndarray] = {}
    for dim, value in query.dims().items():
        part = np.abs(getattr(cols, f"{dim}_mm") - value) / tolerance.for_value(value)
        parts[dim] = np.where(np.isnan(part), weights.missing_dimension, part)
    if query.kind is not None:
        parts["kind"] = _kind_penalties(PartKind(query.kind), weights)[cols.kind]
    if query.material is not None:
        pen = _material_penalties(query.material, weights)[cols.material]
        parts["material"] = np.where(cols.any_material, 0.0, pen)
    return parts


def _rank_scores(query: MatchQuery, candidates: PartArrays, tolerance: MatchTolerance,
                 weights: MatchWeights) -> np.ndarray:
    """Total score of every row in float32, for ranking only (fewer bytes per pass).

    Same sum as :func:`_score_columns`; the top rows are re-scored exactly in float64.
    """
    total = np.zeros(len(candidates), dtype=np.float32)
    for dim, value in query.dims().items():
        col, missing = candidates.ranking_column(dim)
        part = np.subtract(col, np.float32(value))
        np.abs(part, out=part)
        part *= np.float32(1.0 / tolerance.for_value(value))
        if missing is not None:
            part[missing] = np.float32(weights.missing_dimension)
        total += part
    if query.kind is not None:
        kind = PartKind(query.kind)
        total += candidates.penalty_vector(
            ("kind", kind, weights),
            lambda: _kind_penalties(kind, weights)[candidates.cols.kind])
    if query.material is not None:
        wanted = query.material
        total += candidates.penalty_vector(
            ("material", wanted, weights),
            lambda: np.where(candidates.cols.any_material, 0.0,
                             _material_penalties(wanted, weights)[candidates.cols.material]))
    return total


def _value(x: float) -> float | None:
    return None if math.isnan(x) else float(x)


@dataclass(frozen=True, slots=True)
class MatchOptions:
    """How :func:`match` scores and checks: the tolerance per reading, the score weights, a
    score ceiling (``max_score``: candidates above it are dropped) and, with a seat, the fit
    rules and the reference hardness of the hardness check."""

    tolerance: MatchTolerance = MatchTolerance()
    weights: MatchWeights = MatchWeights()
    max_score: float | None = None
    rules: FitRules = FitRules()
    reference_shore_a: float | None = None


def match(query: MatchQuery, candidates: PartArrays, *, limit: int = 10,
          seat: SeatSpec | None = None, options: MatchOptions = MatchOptions()
          ) -> list[Candidate]:
    """The ``limit`` best candidates for the measured dimensions, best first.

    ``options.max_score`` drops candidates scoring above it. With a ``seat`` each candidate
    also gets the fit verdict of :func:`inventory.bench.fit.fit` (computed on the same
    rules, with the hardness check when ``options.reference_shore_a`` is given), and the
    candidates rank
    pass before marginal before fail (before a kind that does not go there), then by
    score, among the ``limit + 16`` closest by score. Raises ``ValueError`` when no
    dimension is given.
    """
    tolerance, weights, max_score = options.tolerance, options.weights, options.max_score
    rules, reference_shore_a = options.rules, options.reference_shore_a
    dims = query.dims()
    if not dims:
        raise ValueError("give at least one dimension to match (id, od, height or cs)")
    for name, value in dims.items():
        if not value > 0:
            raise ValueError(f"{name} must be a positive length, got {value!r}")
    n = len(candidates)
    if n == 0 or limit <= 0:
        return []
    rough = _rank_scores(query, candidates, tolerance, weights)
    # take a margin of extra rows so float32 rounding cannot push a true top row out
    k = min(n, limit + 16)
    if k < n:  # every row tied with the k-th too: ties then rank by index, never by chance
        top = np.flatnonzero(rough <= rough[np.argpartition(rough, k - 1)[:k]].max())
    else:
        top = np.arange(n)
    sub = candidates.cols.take(top)
    parts_top = _score_columns(query, sub, tolerance, weights)
    total_top = np.sum(list(parts_top.values()), axis=0)
    verdicts = None
    seat_kinds = None
    if seat is None:
        order = np.lexsort((top, total_top))
    else:
        seat_kinds = kind_status_table(PartKind(seat.part_kind), rules)
        verdicts = worst(evaluate(sub, seat, rules, reference_shore_a=reference_shore_a))
        verdicts = np.where(seat_kinds[sub.kind] == NOT_APPLICABLE, len(STATUS_NAMES),
                            verdicts)
        order = np.lexsort((top, total_top, verdicts))
    if max_score is not None:
        order = order[total_top[order] <= max_score]
    order = order[:limit]
    top = top[order]
    parts = {name: part[order] for name, part in parts_top.items()}
    total = total_top[order]
    if verdicts is not None:
        verdicts = verdicts[order]
    cols = candidates.cols
    out = []
    for rank, i in enumerate(top):
        breakdown = {name: float(part[rank]) for name, part in parts.items()}
        dim_parts = {d: breakdown[d] for d in DIMENSIONS if d in breakdown}
        driver = max(dim_parts, key=dim_parts.__getitem__) if dim_parts else None
        kind = KINDS[cols.kind[i]]
        cand_verdict = None
        if verdicts is not None and seat_kinds is not None:
            applies = seat_kinds[cols.kind[i]]
            cand_verdict = ("n/a" if applies == NOT_APPLICABLE
                            else STATUS_NAMES[int(verdicts[rank])])
        derived = kind in ROUND_SECTION and candidates.source == "standard"
        out.append(Candidate(
            index=int(i), code=str(candidates.codes[i]), source=candidates.source,
            kind=str(kind), id_mm=_value(cols.id_mm[i]),
            od_mm=None if derived else _value(cols.od_mm[i]),
            height_mm=None if derived else _value(cols.height_mm[i]),
            cs_mm=_value(cols.cs_mm[i]), score=float(total[rank]), parts=breakdown,
            driver=driver, verdict=cand_verdict))
    return out


# ------------------------------------------------------------------------------ fit matrix

def fit_matrix(seats: Sequence[SeatSpec], parts: PartArrays, *, rules: FitRules = FitRules(),
               reference_shore_a: float | None = None) -> np.ndarray:
    """Verdict codes of every part in every seat, shape ``(len(seats), len(parts))``.

    0 pass, 1 marginal, 2 fail (as :data:`~inventory.bench.fit_limits.STATUS_NAMES`), and
    -1 where the part's kind does not go in the seat. Each cell equals the verdict of
    :func:`inventory.bench.fit.fit` for that pair. Only parts of an applicable kind are
    evaluated, each seat over all of them at once.
    """
    out = np.full((len(seats), len(parts)), NOT_APPLICABLE, dtype=np.int8)
    subsets: dict[tuple[int, ...], tuple[np.ndarray, PartColumns]] = {}
    for row, seat in enumerate(seats):
        table = kind_status_table(PartKind(seat.part_kind), rules)
        kinds = tuple(int(k) for k in np.flatnonzero(table != NOT_APPLICABLE))
        if kinds not in subsets:
            idx = parts.indices_for_kinds(kinds)
            subsets[kinds] = (idx, parts.cols.take(idx))
        idx, cols = subsets[kinds]
        if len(idx):
            out[row, idx] = worst(evaluate(cols, seat, rules,
                                           reference_shore_a=reference_shore_a))
    return out


def parts_fitting(seat: SeatSpec, parts: PartArrays, *, rules: FitRules = FitRules(),
                  include_marginal: bool = True,
                  reference_shore_a: float | None = None) -> list[tuple[int, str]]:
    """(index, verdict) of every part that fits the seat, passes first, then by code."""
    codes = fit_matrix([seat], parts, rules=rules, reference_shore_a=reference_shore_a)[0]
    allowed = (0, 1) if include_marginal else (0,)
    hits = np.flatnonzero(np.isin(codes, allowed))
    order = sorted(hits, key=lambda i: (codes[i], str(parts.codes[i])))
    return [(int(i), STATUS_NAMES[codes[i]]) for i in order]
