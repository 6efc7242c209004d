"""The bench's input values read and checked (seal kind, material, measured dimensions,
tolerance, hardness), each refusal one line naming the option. Pure; the faces reach these
through :mod:`inventory.bench.service`."""

from __future__ import annotations

import dataclasses

from inventory.bench.fit_limits import FitRules, Limit
from inventory.bench.match_query import MatchTolerance
from inventory.bench.seals import MATERIALS, PLAUSIBLE_MM, normalise_material, parse_dimension
from inventory.core.errors import InventoryError
from inventory.core.model import PartKind
from inventory.core.units import check_range, read_length

#: Kinds that have no dimensions to match or fit (consumables and kits).
NOT_BENCH_KINDS = frozenset({PartKind.OIL, PartKind.GREASE, PartKind.KIT})

_DIM_OPTION = {"id": "--id", "od": "--od", "height": "--height", "cs": "--cs"}
_DIM_LABEL = {"id": "inside diameter", "od": "outside diameter", "height": "height",
              "cs": "cross-section"}


# ------------------------------------------------------------------------ parsing input

def parse_kind(text: str | None) -> PartKind | None:
    """A part kind from ``o_ring``, ``o-ring``, ``O ring``; unknown text -> one-line error
    with the closest kinds."""
    if text is None:
        return None
    key = text.strip().lower().replace("-", "_").replace(" ", "_")
    kinds = [k.value for k in PartKind if k not in NOT_BENCH_KINDS]
    if key in kinds:
        return PartKind(key)
    from rapidfuzz import fuzz, process  # only to suggest a spelling

    close = [c for c, _, _ in process.extract(key, kinds, scorer=fuzz.ratio, limit=3,
                                              score_cutoff=50)]
    hint = f"did you mean {', '.join(close)}?" if close else f"one of {', '.join(kinds)}"
    raise InventoryError(f"unknown seal kind {text!r}", kind="unknown", hint=hint)


def parse_material(text: str | None) -> str | None:
    if text is None:
        return None
    key = normalise_material(text)
    if key in MATERIALS:
        return key
    from rapidfuzz import fuzz, process  # only to suggest a spelling

    close = [c for c, _, _ in process.extract(key or "", list(MATERIALS), scorer=fuzz.ratio,
                                              limit=3, score_cutoff=50)]
    hint = f"did you mean {', '.join(close)}?" if close else "an ISO 1629 code such as NBR"
    raise InventoryError(f"unknown material {text!r}", kind="unknown", hint=hint)


def _union_range(dim: str) -> tuple[float, float]:
    spans = [r[f"{dim}_mm"] for r in PLAUSIBLE_MM.values() if f"{dim}_mm" in r]
    return min(lo for lo, _ in spans), max(hi for _, hi in spans)


def parse_dim(text: str | None, dim: str, kind: PartKind | None, *,
              unit: str = "mm") -> float | None:
    """A measured dimension in mm (``"32"``, ``"1.26in"``, ``"1-1/4in"``), checked for the
    kind; without a kind, against the widest plausible range of any seal. Errors name the
    option: ``--cs: O-ring cross-section 35 mm is outside the plausible 0.5-15 mm``."""
    if text is None:
        return None
    try:
        if kind is not None and f"{dim}_mm" in PLAUSIBLE_MM.get(kind, {}):
            return parse_dimension(text, kind, dim, default_unit=unit)
        low, high = _union_range(dim)
        return check_range(read_length(text, unit), low, high,
                           what=f"seal {_DIM_LABEL[dim]}")
    except ValueError as exc:
        raise InventoryError(f"{_DIM_OPTION[dim]}: {exc}") from None


def parse_tolerance(text: str | None, *, unit: str = "mm") -> MatchTolerance:
    """``--tol X``: a fixed tolerance in mm (or inches) for every dimension; the default
    suits a caliper reading on a used seal (:class:`MatchTolerance`)."""
    if text is None:
        return MatchTolerance()
    try:
        tol = read_length(text, unit).mm
    except ValueError as exc:
        raise InventoryError(f"--tol: {exc}") from None
    if tol > 5.0:
        raise InventoryError(f"--tol: {tol:g} mm is wider than any seal tolerance (5 mm at most)")
    return MatchTolerance(abs_mm=tol, rel=0.0)


def hardness_rules(rules: FitRules, tolerance: float | None) -> FitRules:
    """``rules`` with the hardness pass band set to +/- ``tolerance`` Shore A (the marginal
    bands stay as they are)."""
    if tolerance is None:
        return rules
    if not 0 <= tolerance <= 50:
        raise InventoryError(f"--hardness-tol must be 0 to 50 Shore A, got {tolerance:g}")
    old = rules.hardness
    return dataclasses.replace(rules, hardness=Limit(-tolerance, tolerance, old.below,
                                                     old.above, old.unit))


def check_hardness(value: float | None) -> float | None:
    if value is not None and not 10 <= value <= 100:
        raise InventoryError(f"--hardness must be 10 to 100 Shore A, got {value:g}")
    return value
