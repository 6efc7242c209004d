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
from inventory.bench.fit_columns import PartColumns, columns_from_specs, material_code
from inventory.bench.fit_limits import (
    KIND_CODE,
    KINDS,
    MATERIAL_CODES,
    NO_MATERIAL,
    NOT_APPLICABLE,
    STATUS_NAMES,
    UNKNOWN_MATERIAL,
    FitRules,
)
from inventory.bench.fit_rules import evaluate, worst
from inventory.bench.seals import MATERIALS, ROUND_SECTION
from inventory.bench.sizes import StandardRings, standard_orings
from inventory.core.model import PartKind, PartSpec, SeatSpec

DIMENSIONS = ("id", "od", "height", "cs")


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

@dataclass(frozen=True, slots=True)
class MatchQuery:
    """What was measured (mm) and, optionally, the kind and material wanted."""

    id_mm: float | None = None
    od_mm: float | None = None
    height_mm: float | None = None
    cs_mm: float | None = None
    kind: PartKind | None = None
    material: str | None = None

    def dims(self) -> dict[str, float]:
        return {d: getattr(self, f"{d}_mm") for d in DIMENSIONS
                if getattr(self, f"{d}_mm") is not None}


@dataclass(frozen=True, slots=True)
class MatchTolerance:
    """Tolerance per measured dimension: ``abs_mm + rel * value``.

    Defaults suit a caliper reading on a used seal (common practice): a caliper reads to
    about +/-0.02-0.03 mm (REFERENCE.md 3), soft rubber gives under the jaws by a few
    hundredths to a tenth, and a used seal is worn, set or swollen by the oil by one or two
    per cent of its size. 0.15 mm + 1.5 % gives +/-0.20 mm on a 3.5 mm cross-section and
    +/-0.52 mm on a 25 mm inside diameter: wide enough to find the part, narrow enough to
    separate the neighbouring AS568 sizes (1/16 in apart).
    """

    abs_mm: float = 0.15
    rel: float = 0.015

    def for_value(self, value_mm: float) -> float:
        return self.abs_mm + self.rel * abs(value_mm)


@dataclass(frozen=True, slots=True)
class MatchWeights:
    """Score parts that are not dimensions (in units of 'one tolerance off')."""

    #: A measured dimension the candidate does not record.
    missing_dimension: float = 3.0
    #: Candidate of another kind than asked for.
    kind_mismatch: float = 5.0
    #: Candidate of a related kind (X-ring for O-ring, scraper for wiper).
    kind_related: float = 1.0
    #: Candidate of another polymer family than asked for.
    material_mismatch: float = 2.0
    #: Same family, other grade (NBR for HNBR, EU for AU).
    material_family: float = 0.5
    #: Candidate's material not recorded or unknown.
    material_unknown: float = 1.0


_RELATED = (
    frozenset({PartKind.O_RING, PartKind.X_RING}),
    frozenset({PartKind.DUST_WIPER, PartKind.SCRAPER_SEAL}),
)


@dataclass(frozen=True, slots=True)
class Candidate:
    """One ranked candidate with its score broken into named parts."""

    index: int
    code: str
    source: str
    kind: str
    id_mm: float | None
    od_mm: float | None
    height_mm: float | None
    cs_mm: float | None
    score: float
    parts: dict[str, float]
    driver: str | None  # the measured dimension with the largest part
    verdict: str | None = None  # when a seat was given

    def to_dict(self) -> dict:
        d = {"source": self.source, "kind": self.kind, "id_mm": self.id_mm,
             "od_mm": self.od_mm, "height_mm": self.height_mm, "cs_mm": self.cs_mm,
             "score": self.score, "parts": self.parts, "driver": self.driver}
        d["designation" if self.source == "standard" else "part"] = self.code
        if self.verdict is not None:
            d["verdict"] = self.verdict
        return d


def _kind_penalties(kind: PartKind, weights: MatchWeights) -> np.ndarray:
    table = np.full(len(KINDS), weights.kind_mismatch)
    for group in _RELATED:
        if kind in group:
            for k in group:
                table[KIND_CODE[k]] = weights.kind_related
    table[KIND_CODE[PartKind(kind)]] = 0.0
    return table


def _material_penalties(material: str, weights: MatchWeights) -> np.ndarray:
    """Penalty per material code; slots UNKNOWN_MATERIAL and NO_MATERIAL (-1) at the end."""
    wanted = material_code(material)
    table = np.full(len(MATERIAL_CODES) + 2, weights.material_mismatch)
    table[UNKNOWN_MATERIAL] = table[NO_MATERIAL] = weights.material_unknown
    if wanted >= 0 and wanted != UNKNOWN_MATERIAL:
        family = MATERIALS[MATERIAL_CODES[wanted]].family
        for i, code in enumerate(MATERIAL_CODES):
            if MATERIALS[code].family == family:
                table[i] = weights.material_family
        table[wanted] = 0.0
    return table


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


def match(query: MatchQuery, candidates: PartArrays, *,
          tolerance: MatchTolerance = MatchTolerance(), weights: MatchWeights = MatchWeights(),
          limit: int = 10, max_score: float | None = None, seat: SeatSpec | None = None,
          rules: FitRules = FitRules(),
          reference_shore_a: float | None = None) -> list[Candidate]:
    """The ``limit`` best candidates for the measured dimensions, best first.

    ``max_score`` drops candidates scoring above it. With a ``seat`` each candidate also
    gets the fit verdict of :func:`inventory.bench.fit.fit` (computed on the same rules,
    with the hardness check when ``reference_shore_a`` is given), and the candidates rank
    pass before marginal before fail (before a kind that does not go there), then by
    score, among the ``limit + 16`` closest by score. Raises ``ValueError`` when no
    dimension is given.
    """
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
    top = np.argpartition(rough, k - 1)[:k] if k < n else np.arange(n)
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
