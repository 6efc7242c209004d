"""The pieces every fit rule set is built from: a check over a column of parts
(:class:`RawCheck`), range grading, the seat values a rule needs, the kind and material
status tables and the ISO 286 limits of seat diameters."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from inventory.bench.fit_limits import (
    FAIL,
    KIND_CODE,
    KINDS,
    MARGINAL,
    MATERIAL_CODES,
    NOT_APPLICABLE,
    PASS,
    SRC_CP,
    STATUS_CODE,
    FitRules,
    Limit,
)
from inventory.bench.seals import MATERIALS, MEDIUM_STATUS
from inventory.bench.tolerances import HOLE, check_role, limits
from inventory.core.model import Gland, Medium, Motion, PartKind, SeatSpec


@dataclass(frozen=True, eq=False)
class RawCheck:
    """One check over a column of parts: values (NaN = could not compute) and statuses."""

    name: str
    value: np.ndarray | None  # None: a text value (kind, material) the scalar path fills in
    allowed: str
    status: np.ndarray  # int8 per part
    source: str
    unit: str = ""
    note: str = ""
    #: Checks judged over the tolerance range: the lowest and highest value per part, and
    #: which extreme drives the status (DRIVER_NONE, DRIVER_LOW, DRIVER_HIGH).
    low: np.ndarray | None = None
    high: np.ndarray | None = None
    driver: np.ndarray | None = None


def make_check(name: str, value: np.ndarray, limit: Limit, source: str, note: str = "") -> RawCheck:
    return RawCheck(name, value, limit.text(), limit.grade(value), source, limit.unit, note)


DRIVER_NONE, DRIVER_LOW, DRIVER_HIGH = 0, 1, 2
DRIVER_TEXT = ("", "minimum", "maximum")


def range_status(limit: Limit, nominal: Any, low: Any, high: Any) -> tuple[np.ndarray,
                                                                            np.ndarray]:
    """Status and driving extreme of a value known over a range ``[low, high]``.

    Pass only when the whole range lies inside the pass limits; marginal when the nominal
    passes but an extreme does not (however far out it lies); otherwise the nominal's own
    status (marginal band or fail). The driver is the extreme lying further outside the
    pass range, where an extreme lowers the status below the nominal's.
    """
    nom = limit.grade(nominal)
    lo_s, hi_s = limit.grade(low), limit.grade(high)
    ext = np.minimum(np.maximum(lo_s, hi_s), MARGINAL)
    status = np.maximum(nom, ext).astype(np.int8)
    with np.errstate(invalid="ignore"):
        below = np.nan_to_num(limit.low - np.asarray(low, dtype=float), nan=np.inf)
        above = np.nan_to_num(np.asarray(high, dtype=float) - limit.high, nan=np.inf)
    which = np.where(below >= above, DRIVER_LOW, DRIVER_HIGH)
    driver = np.where(status > nom, which, DRIVER_NONE).astype(np.int8)
    return status, driver


def range_check(name: str, nominal: np.ndarray, low: np.ndarray, high: np.ndarray,
                 limit: Limit, source: str, note: str = "") -> RawCheck:
    status, driver = range_status(limit, nominal, low, high)
    return RawCheck(name, nominal, limit.text(), status, source, limit.unit, note,
                    low=np.asarray(low, dtype=float), high=np.asarray(high, dtype=float),
                    driver=driver)


def seat_problem(n: int, message: str) -> list[RawCheck]:
    return [RawCheck("seat data", None, message, np.full(n, FAIL, dtype=np.int8), SRC_CP)]


#: The seat values a radial gland is described by: the surface the seal runs on, the groove
#: diameter and the groove width.
RADIAL = {
    Gland.PISTON: ("bore_mm", "groove_mm", "groove_width_mm"),
    Gland.ROD: ("rod_mm", "groove_mm", "groove_width_mm"),
}


def need(seat: SeatSpec, *names: str) -> dict[str, float] | str:
    """The seat values a rule needs, or the text naming those that are missing."""
    missing = [name for name in names if getattr(seat, name) is None]
    if missing:
        return "needs " + ", ".join(missing)
    return {name: float(getattr(seat, name)) for name in names}


FAMILY = {
    PartKind.O_RING: "ring", PartKind.X_RING: "ring", PartKind.U_CUP: "lip",
    PartKind.DUST_WIPER: "wiper", PartKind.SCRAPER_SEAL: "wiper",
    PartKind.FOAM_RING: "foam", PartKind.TOP_OUT_BUMPER: "bumper",
    PartKind.VOLUME_SPACER: "spacer", PartKind.CRUSH_WASHER: "washer",
    PartKind.GLIDE_RING: "glide",
}
ELASTOMER_FAMILIES = frozenset({"ring", "lip", "wiper", "foam", "bumper"})
#: Families whose polymer is checked against the seat's medium (hardness: elastomers only).
MATERIAL_FAMILIES = ELASTOMER_FAMILIES | {"glide"}


def kind_status_table(seat_kind: PartKind, rules: FitRules) -> np.ndarray:
    """Status code per part kind for a seat of ``seat_kind``; NOT_APPLICABLE where the kind
    does not go there."""
    table = np.full(len(KINDS), NOT_APPLICABLE, dtype=np.int8)
    table[KIND_CODE[PartKind(seat_kind)]] = PASS
    for seat_k, part_k, status in rules.substitutes:
        if seat_k == seat_kind:
            table[KIND_CODE[part_k]] = STATUS_CODE[status]
    return table


def material_status_table(medium: Medium, rules: FitRules) -> np.ndarray:
    """Status per material code for a seat medium; the last two slots are an unknown code
    and a material not recorded (index -1)."""
    unknown = STATUS_CODE[rules.unknown_material_status]
    table = [STATUS_CODE[MEDIUM_STATUS[(Medium(medium), MATERIALS[m].oil)]]
             for m in MATERIAL_CODES]
    return np.asarray(table + [unknown, unknown], dtype=np.int8)


def squeeze_range(seat: SeatSpec, rules: FitRules) -> Limit:
    if Motion(seat.motion) == Motion.STATIC:
        return rules.squeeze_static
    if Medium(seat.medium) == Medium.AIR:
        return rules.squeeze_dynamic_air
    return rules.squeeze_dynamic_oil


def swell_pct(seat: SeatSpec, rules: FitRules) -> float:
    return rules.swell_pct_dry if Medium(seat.medium) == Medium.NONE else rules.swell_pct_wetted


def class_limits(nominal: float, fit: str | None, default: str, role: str,
                  what: str) -> tuple[float, float, str] | str:
    """(low, high, text) of a seat diameter from its ISO 286 class, or the problem as text
    (a class of the wrong role, an unknown class, a size outside the table): never a
    silent fall-back to the nominal size."""
    cls = fit or default
    try:
        check_role(cls, role)
        low, high = limits(nominal, cls)
    except ValueError as exc:
        return f"{what} {nominal:g} {cls}: {exc}"
    assumed = "" if fit else ", assumed"
    return low, high, f"{what} {nominal:g} {cls}{assumed}: {low:.3f}-{high:.3f}"


def bore_class_limits(bore: float, bore_fit: str | None,
                 rules: FitRules) -> tuple[float, float, str] | str:
    """The housing bore's ISO 286 limits, or the problem as text (no fall-back to nominal)."""
    return class_limits(bore, bore_fit, rules.default_bore_fit, HOLE, "bore")
