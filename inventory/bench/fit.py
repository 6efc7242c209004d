"""Will this part work in that seat? Checks with numbers, sources and a verdict.

:func:`fit` runs the seat kind's rule set (see :mod:`inventory.bench.fit_rules`):

- O-rings and X-rings in rod, piston or face glands: installed stretch, squeeze with the
  cross-section reduced by stretch (constant volume), gland fill with a swell allowance;
  static, dynamic-oil and dynamic-air squeeze ranges (REFERENCE.md 2).
- U-cups and lip seals: radial interference of the section, lip contact, axial clearance.
- Dust wipers and scraper seals: lip interference on the stanchion, press fit of the
  outside diameter over the ISO 286 limits of the housing bore, height against depth.
- Foam rings, top-out bumpers, volume spacers (clearance, usable length, end-of-travel
  pressure by the polytropic law at n = 1.0 and a chosen n), crush washers.
- For elastomers: polymer against the seat's medium, and hardness against a reference.

Each check has a status (pass, marginal, fail); the verdict is the worst. Every result
carries :data:`CAUTION`: a dimensional match never replaces the maker's service data.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from enum import StrEnum

from inventory.bench.fit_checks import DRIVER_TEXT, RawCheck, kind_status_table
from inventory.bench.fit_columns import TOL_BASIS_TEXT, PartColumns, columns_from_specs
from inventory.bench.fit_limits import (
    FAIL,
    KIND_CODE,
    NOT_APPLICABLE,
    STATUS_NAMES,
    FitRules,
    Limit,
)
from inventory.bench.fit_rules import evaluate, worst
from inventory.bench.match_query import CAUTION
from inventory.bench.seals import medium_status
from inventory.core.model import PartKind, PartSpec, SeatSpec

__all__ = ["CAUTION", "Check", "FitResult", "FitRules", "Limit", "Verdict", "fit",
           "kind_applies"]



class Verdict(StrEnum):
    PASS = "pass"
    MARGINAL = "marginal"
    FAIL = "fail"

    @property
    def code(self) -> int:
        return STATUS_NAMES.index(self.value)

    @classmethod
    def from_code(cls, code: int) -> Verdict:
        return cls(STATUS_NAMES[int(code)])

    @classmethod
    def worst(cls, verdicts: list[Verdict]) -> Verdict:
        return cls.from_code(max((v.code for v in verdicts), default=0))


@dataclass(frozen=True, slots=True)
class Check:
    """One rule applied: the computed value, the allowed range, the status, the source."""

    name: str
    value: float | str | None
    allowed: str
    status: Verdict
    source: str
    unit: str = ""
    note: str = ""
    #: Checks judged over the tolerance range (O-ring and X-ring glands): the lowest and
    #: highest value, and which extreme ("minimum", "maximum") drives the status, if any.
    low: float | None = None
    high: float | None = None
    driver: str | None = None

    def range_text(self) -> str:
        """``0.69 to 13.14 %, minimum drives`` (empty for a check without a range)."""
        if self.low is None or self.high is None:
            return ""
        fmt = "{:.3f}" if self.unit == "mm" else "{:.2f}"
        unit = f" {self.unit}" if self.unit else ""
        text = f"{fmt.format(self.low)} to {fmt.format(self.high)}{unit}"
        return f"{text}, {self.driver} drives" if self.driver else text

    def to_dict(self) -> dict:
        d = {"name": self.name, "value": self.value, "allowed": self.allowed,
             "status": str(self.status), "source": self.source, "unit": self.unit,
             "note": self.note}
        if self.low is not None:
            d.update(low=self.low, high=self.high, driver=self.driver)
        return d


@dataclass(frozen=True, slots=True)
class FitResult:
    part: str
    fork: str
    seat: str
    verdict: Verdict
    checks: tuple[Check, ...]
    caution: str = CAUTION

    def to_dict(self) -> dict:
        return {"part": self.part, "fork": self.fork, "seat": self.seat,
                "verdict": str(self.verdict), "checks": [c.to_dict() for c in self.checks],
                "caution": self.caution}


def kind_applies(part_kind: PartKind, seat_kind: PartKind, *,
                 rules: FitRules = FitRules()) -> bool:
    """True when a part of ``part_kind`` may go in a seat for ``seat_kind`` (same kind or a
    listed substitute)."""
    table = kind_status_table(PartKind(seat_kind), rules)
    return bool(table[KIND_CODE[PartKind(part_kind)]] != NOT_APPLICABLE)


def _value(raw: RawCheck, part: PartSpec) -> float | str | None:
    if raw.name == "kind":
        return str(part.kind)
    if raw.name == "material":
        return part.material or ("any (standard size)" if part.standard else None)
    if raw.value is None:
        return None
    v = float(raw.value[0])
    return None if math.isnan(v) else v


def _range(raw: RawCheck) -> tuple[float | None, float | None, str | None]:
    if raw.low is None or raw.high is None:
        return None, None, None
    low, high = float(raw.low[0]), float(raw.high[0])
    if math.isnan(low) or math.isnan(high):
        return None, None, None
    driver = DRIVER_TEXT[int(raw.driver[0])] if raw.driver is not None else ""
    return low, high, driver or None


def _tolerance_note(cols: PartColumns, part: PartSpec) -> str:
    if cols.id_tol_mm is None or cols.cs_tol_mm is None or cols.tol_basis is None:
        return ""
    it, ct = float(cols.id_tol_mm[0]), float(cols.cs_tol_mm[0])
    if math.isnan(it) or math.isnan(ct):
        return ""
    return (f"ring {part.id_mm:g} +/-{it:.2f} x {part.cs_mm:g} +/-{ct:.2f} mm, "
            f"{TOL_BASIS_TEXT[int(cols.tol_basis[0])]}")


def _note(raw: RawCheck, part: PartSpec, seat: SeatSpec) -> str:
    if raw.name == "material":
        if part.material is None and part.standard:
            return "standard size: order it in a compound that suits the seat"
        return medium_status(part.material, seat.medium)[1]
    if raw.name == "kind" and raw.status[0] == FAIL:
        return f"a {part.kind} does not go in a {seat.part_kind} seat"
    if raw.value is not None and math.isnan(float(raw.value[0])) and raw.name != "seat data":
        return "missing part dimension: " + (raw.note or "cannot compute")
    return raw.note


def fit(part: PartSpec, seat: SeatSpec, *, rules: FitRules = FitRules(),
        reference_shore_a: float | None = None) -> FitResult:
    """Check one part against one seat. ``reference_shore_a`` adds a hardness check
    (within ``rules.hardness`` of the reference, e.g. the original part's hardness)."""
    cols = columns_from_specs([part])
    raws = evaluate(cols, seat, rules, reference_shore_a=reference_shore_a)
    if not kind_applies(part.kind, seat.part_kind, rules=rules):
        raws = raws[:1]  # geometry of the wrong kind means nothing
    tol_note = _tolerance_note(cols, part)
    checks = []
    for raw in raws:
        low, high, driver = _range(raw)
        note = _note(raw, part, seat)
        if low is not None and raw.name == "installed stretch" and tol_note:
            note = f"{tol_note}; {note}"
        checks.append(Check(raw.name, _value(raw, part), raw.allowed,
                            Verdict.from_code(raw.status[0]), raw.source, raw.unit, note,
                            low, high, driver))
    verdict = Verdict.from_code(int(worst(raws)[0]))
    return FitResult(part.code, seat.fork, seat.seat, verdict, tuple(checks))
