"""What a dimensional search asks and answers, without numpy: the measurement
(:class:`MatchQuery`), its tolerance, the score weights, one ranked :class:`Candidate`, and
the kind and material penalties as plain tables. :mod:`inventory.bench.matching` scores
arrays with them; :mod:`inventory.bench.match_sql` scores the rows the database returns.
"""

from __future__ import annotations

from dataclasses import dataclass

from inventory.bench.fit_limits import (
    KIND_CODE,
    KINDS,
    MATERIAL_CODES,
    NO_MATERIAL,
    UNKNOWN_MATERIAL,
)
from inventory.bench.seals import MATERIALS
from inventory.core.model import PartKind

DIMENSIONS = ("id", "od", "height", "cs")

#: The last line of every match and fit.
CAUTION = ("A dimensional match is a suggestion: check material, profile and the maker's "
           "service data; release all air before opening an air spring.")


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


def kind_penalty_table(kind: PartKind, weights: MatchWeights) -> list[float]:
    """Kind penalty per kind code (:data:`~inventory.bench.fit_limits.KIND_CODE`)."""
    table = [weights.kind_mismatch] * len(KINDS)
    for group in _RELATED:
        if kind in group:
            for k in group:
                table[KIND_CODE[k]] = weights.kind_related
    table[KIND_CODE[PartKind(kind)]] = 0.0
    return table


def material_penalty_table(material: str, weights: MatchWeights) -> list[float]:
    """Penalty per material code; slots UNKNOWN_MATERIAL and NO_MATERIAL (-1) at the end."""
    from inventory.bench.fit_limits import material_code

    wanted = material_code(material)
    table = [weights.material_mismatch] * (len(MATERIAL_CODES) + 2)
    table[UNKNOWN_MATERIAL] = table[NO_MATERIAL] = weights.material_unknown
    if wanted >= 0 and wanted != UNKNOWN_MATERIAL:
        family = MATERIALS[MATERIAL_CODES[wanted]].family
        for i, code in enumerate(MATERIAL_CODES):
            if MATERIALS[code].family == family:
                table[i] = weights.material_family
        table[wanted] = 0.0
    return table
