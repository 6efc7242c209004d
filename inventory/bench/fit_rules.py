"""Fit thresholds and the per-kind rule sets, evaluated over columns of parts.

One implementation serves both the scalar :func:`inventory.bench.fit.fit` (a column of one
part) and the compatibility matrix (a column of many parts), so the two cannot disagree.
Each rule returns :class:`RawCheck` items: a name, the computed values, the allowed range
as text, a status code per part (0 pass, 1 marginal, 2 fail) and the rule's source.

Thresholds live in :class:`FitRules`, a frozen dataclass whose defaults carry their source:
REFERENCE.md section, textbook "(recalled from memory)" or "(common practice)".
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from functools import lru_cache
from typing import Any

import numpy as np

from inventory.bench.fit_geometry import (
    P_ATM_BAR,
    cross_section_bounds,
    spacer_end_pressure,
    stretched_cross_section,
)
from inventory.bench.seals import MATERIALS, MEDIUM_STATUS, ROUND_SECTION, normalise_material
from inventory.bench.sizes import normalise_designation, standard_orings
from inventory.bench.tolerances import HOLE, SHAFT, check_role, limits
from inventory.core.fits import fit_class_problems, seat_problems
from inventory.core.model import Gland, Medium, Motion, PartKind, PartSpec, SeatSpec

PASS, MARGINAL, FAIL = 0, 1, 2
NOT_APPLICABLE = -1  # the part's kind does not go in the seat (matrix only)
STATUS_NAMES = ("pass", "marginal", "fail")
_STATUS_CODE = {name: code for code, name in enumerate(STATUS_NAMES)}

KINDS: tuple[PartKind, ...] = tuple(PartKind)
KIND_CODE = {k: i for i, k in enumerate(KINDS)}
MATERIAL_CODES: tuple[str, ...] = tuple(MATERIALS)
MATERIAL_CODE = {m: i for i, m in enumerate(MATERIAL_CODES)}
UNKNOWN_MATERIAL = len(MATERIAL_CODES)  # a code not in MATERIALS
NO_MATERIAL = -1  # material not recorded (indexes the last slot of a lookup table)

# Sources shown to the user beside each check. "Recalled from memory" marks textbook ranges
# not re-read for this project; "common practice" marks trade rules of thumb.
SRC_GLAND = ("O-ring gland squeeze ranges: seal handbooks (Flitney, Seals and Sealing Handbook; "
             "Mueller & Nau, Fluid Sealing Technology; recalled from memory) and common practice")
SRC_STRETCH = "installed stretch ceiling 5 %, seal handbooks (recalled from memory; common practice)"
SRC_FILL = "gland fill at most 85 % with fluid swell, seal handbooks (recalled from memory)"
SRC_CP = "common practice"
SRC_ISO286 = "ISO 286 limits of the bore class; interference range common practice"
SRC_GAS = "polytropic gas law p1 V1^n = p2 V2^n (absolute pressures); limit common practice"
SRC_MATERIAL = "polymer vs mineral oil: seal handbooks (recalled from memory; common practice)"
SRC_HARDNESS = "hardness within the tolerance of the original (common practice)"
SRC_KIND = "seal kind of the seat (common practice for substitutes)"
SRC_GLIDE = ("guide-ring housings: ISO 6547 (scope only); clearances common practice")
SRC_RING_TOL = ("ring tolerances: AS568 / ISO 3601-1 tables shipped in inventory/standards; "
                "seat limits: ISO 286 classes (REFERENCE.md 1-3)")


@dataclass(frozen=True, slots=True)
class Limit:
    """A pass range ``[low, high]`` with marginal bands ``below`` and ``above`` it.

    A value inside passes; within ``below`` under ``low`` or ``above`` over ``high`` is
    marginal; anything else (or a missing value) fails.
    """

    low: float
    high: float
    below: float = 0.0
    above: float = 0.0
    unit: str = "%"

    def grade(self, value: Any) -> np.ndarray:
        v = np.asarray(value, dtype=float)
        # a value that prints as the bound is on the bound: forgive float round-off
        eps = 1e-9
        status = np.full(v.shape, FAIL, dtype=np.int8)
        status[(v >= self.low - self.below - eps) & (v <= self.high + self.above + eps)] = MARGINAL
        status[(v >= self.low - eps) & (v <= self.high + eps)] = PASS
        return status

    def text(self) -> str:
        unit = f" {self.unit}" if self.unit else ""
        if math.isinf(self.low) and math.isinf(self.high):
            return "any"
        if math.isinf(self.low):
            return f"<= {self.high:g}{unit}"
        if math.isinf(self.high):
            return f">= {self.low:g}{unit}"
        return f"{self.low:g} to {self.high:g}{unit}"


INF = math.inf

DEFAULT_SUBSTITUTES: tuple[tuple[PartKind, PartKind, str], ...] = (
    # (seat kind, part kind, status): an X-ring fits an O-ring gland (four-lobe rings are
    # made for O-ring housings); an O-ring in an X-ring seat may twist in dynamic use;
    # wiper and scraper profiles differ (all common practice).
    (PartKind.O_RING, PartKind.X_RING, "pass"),
    (PartKind.X_RING, PartKind.O_RING, "marginal"),
    (PartKind.DUST_WIPER, PartKind.SCRAPER_SEAL, "marginal"),
    (PartKind.SCRAPER_SEAL, PartKind.DUST_WIPER, "marginal"),
)


@dataclass(frozen=True)
class FitRules:
    """Every threshold the fit rules use, with its source. Pass a changed copy
    (``dataclasses.replace(FitRules(), ...)``) to apply a shop's own limits."""

    # O-rings and X-rings in radial glands ------------------------------------------------
    #: Squeeze of a static seal, % of the (stretched) cross-section. REFERENCE.md 2 (M/CP).
    squeeze_static: Limit = Limit(15.0, 30.0, 3.0, 3.0)
    #: Dynamic reciprocating, oil-wetted (hydraulic range). REFERENCE.md 2 (M/CP).
    squeeze_dynamic_oil: Limit = Limit(10.0, 20.0, 2.0, 2.0)
    #: Dynamic reciprocating, air (pneumatic range). REFERENCE.md 2 (M/CP).
    squeeze_dynamic_air: Limit = Limit(6.0, 12.0, 2.0, 2.0)
    #: Installed ID stretch, %: the ceiling is 5 (REFERENCE.md 2, M/CP), so up to 5 passes
    #: (1-3 is the aim, reported in the note); 5-7 is marginal (common practice). A ring up
    #: to 1 % larger than its seat is held by the groove, up to 3 % marginal (common practice).
    stretch: Limit = Limit(-1.0, 5.0, 2.0, 2.0)
    #: Gland fill incl. swell, %: at most 85 (REFERENCE.md 2, M/CP); 85-90 marginal (CP).
    fill: Limit = Limit(-INF, 85.0, 0.0, 5.0)
    #: Volume swell allowed for in oil-wetted and lubricated air seats, % (REFERENCE.md 2
    #: example: x1.05 for 5 %).
    swell_pct_wetted: float = 5.0
    #: Swell for a dry seat (Medium.NONE), %.
    swell_pct_dry: float = 0.0
    #: Room left between a face-seal ring's outside and the counterbore, mm (CP).
    face_outer_room: Limit = Limit(0.0, INF, 0.2, 0.0, "mm")

    # U-cups and lip seals -----------------------------------------------------------------
    #: Radial interference of the seal section in the gland, % of the section
    #: ((section - depth) / section) (common practice).
    lip_section_interference: Limit = Limit(5.0, 15.0, 3.0, 5.0)
    #: Dynamic lip on its running surface, % of the rod or bore diameter (common practice).
    lip_contact: Limit = Limit(0.5, 5.0, 0.5, 2.0)
    #: Axial clearance in the groove, % of the seal height (common practice).
    lip_axial_clearance: Limit = Limit(3.0, 25.0, 3.0, 10.0)

    # Dust wipers and scraper seals ------------------------------------------------------
    #: Lip interference on the stanchion, % of its diameter (common practice).
    wiper_lip_interference: Limit = Limit(1.5, 7.0, 1.0, 2.0)
    #: Press fit of the outside diameter at the largest bore of its class, % (CP).
    wiper_press_fit_loosest: Limit = Limit(0.1, INF, 0.1, 0.0)
    #: Press fit at the smallest bore of its class, % (CP).
    wiper_press_fit_tightest: Limit = Limit(-INF, 1.5, 0.0, 0.5)
    #: ISO 286 class assumed for a housing bore when the seat gives none. H8 is the usual
    #: seal-housing bore (REFERENCE.md 3, recalled from memory).
    default_bore_fit: str = "H8"
    #: ISO 286 classes of a radial O-ring gland when the seat gives none: piston groove
    #: root h9, rod f7, rod-gland groove H9 (REFERENCE.md 2, usual pairing with ISO 3601-2
    #: glands, recalled from memory); the bore uses ``default_bore_fit``.
    default_piston_groove_fit: str = "h9"
    default_rod_fit: str = "f7"
    default_rod_groove_fit: str = "H9"
    #: Height above the housing depth (the lip standing proud), mm (common practice).
    wiper_protrusion: Limit = Limit(0.0, 5.0, 0.5, 2.0, "mm")
    #: Scraper or wiper held in a rod-gland groove (seal head): outside diameter over the
    #: groove diameter, % of the groove diameter; a little interference keeps it from
    #: turning (common practice).
    wiper_groove_fit: Limit = Limit(0.0, 1.5, 0.5, 1.0)
    #: Axial clearance of a scraper in its groove (groove width - height), mm (CP).
    wiper_groove_axial: Limit = Limit(0.0, 0.6, 0.0, 0.6, "mm")

    # Glide rings (PTFE guide / bearing bands) ----------------------------------------------
    #: Axial clearance of the band in its groove (groove width - band width), mm: room for
    #: PTFE's thermal expansion (about ten times steel's) without letting the band shuttle.
    #: Guide-ring housing tables give the groove as band width + 0.2 to 0.4 mm (recalled
    #: from memory); the range here is common practice.
    glide_axial_clearance: Limit = Limit(0.05, 0.6, 0.05, 0.6, "mm")
    #: Radial play per side: groove depth - band thickness, mm. PTFE hardly compresses, so
    #: a band thicker than the depth binds; a much thinner one lets the piston tilt and
    #: touch metal to metal (common practice).
    glide_radial_play: Limit = Limit(0.0, 0.15, 0.03, 0.15, "mm")
    #: Diametral clearance of the free band to its running surface, mm: bore - band
    #: outside (piston gland) or band inside - rod (rod gland). A split band closes its gap
    #: a little when slightly oversize (marginal); an undersize band guides loosely (CP).
    glide_running_clearance: Limit = Limit(0.0, 0.25, 0.1, 0.25, "mm")

    # Foam rings ---------------------------------------------------------------------------
    #: Inside on the stanchion, % of its diameter (positive = ring smaller) (CP).
    foam_id_interference: Limit = Limit(-1.0, 6.0, 1.0, 3.0)
    #: Outside against the pocket bore, % of the bore (positive = ring larger) (CP).
    foam_od_interference: Limit = Limit(-2.0, 4.0, 2.0, 3.0)
    #: Thickness over the pocket depth, ratio (foam is compressed a little) (CP).
    foam_height_ratio: Limit = Limit(0.8, 1.5, 0.1, 0.3, "")

    # Top-out bumpers ----------------------------------------------------------------------
    #: Stretch of the bumper's inside onto its shaft, % (CP).
    bumper_stretch: Limit = Limit(0.0, 8.0, 2.0, 4.0)
    #: Radial room around the bumper, mm (CP).
    bumper_radial_room: Limit = Limit(0.2, INF, 0.2, 0.0, "mm")
    #: Height over the axial room, ratio (CP).
    bumper_height_ratio: Limit = Limit(0.85, 1.0, 0.1, 0.05, "")

    # Volume spacers -----------------------------------------------------------------------
    #: Radial clearance in the chamber bore, mm (CP).
    spacer_radial_clearance: Limit = Limit(0.05, 1.5, 0.05, 1.5, "mm")
    #: Usable length left after the spacer, mm (must not be negative).
    spacer_length_room: Limit = Limit(0.0, INF, 0.0, 0.0, "mm")
    #: Compression ratio V1/V2 of the positive chamber (common practice).
    spacer_compression_ratio: Limit = Limit(-INF, 6.0, 0.0, 2.0, "")
    #: End-of-travel pressure, bar gauge (illustrative trade limit; the maker's data wins).
    spacer_end_pressure: Limit = Limit(-INF, 60.0, 0.0, 20.0, "bar")
    #: Polytropic exponent of the "chosen n" check; 1.0 is always reported too.
    #: 1.2-1.35 is a common modelling choice for fast strokes (REFERENCE.md 9, CP).
    polytropic_n: float = 1.3
    p_atm_bar: float = P_ATM_BAR

    # Crush washers ------------------------------------------------------------------------
    #: Inside clearance over the bolt, mm (CP).
    washer_id_clearance: Limit = Limit(0.0, 0.5, 0.0, 0.5, "mm")
    #: Room between the washer outside and the counterbore, mm (CP).
    washer_outer_room: Limit = Limit(0.0, INF, 0.0, 0.0, "mm")

    # Materials, hardness, kinds -----------------------------------------------------------
    #: Hardness difference to a reference, Shore A: +/-5 pass (REFERENCE.md 6, CP),
    #: up to +/-10 marginal.
    hardness: Limit = Limit(-5.0, 5.0, 5.0, 5.0, "Shore A")
    #: Status of a part whose material is not recorded or not known.
    unknown_material_status: str = "marginal"
    #: Status of a part whose hardness is not recorded when a reference is given.
    unknown_hardness_status: str = "marginal"
    #: Kinds accepted in a seat of another kind: (seat kind, part kind, status).
    substitutes: tuple[tuple[PartKind, PartKind, str], ...] = field(
        default=DEFAULT_SUBSTITUTES
    )


# ---------------------------------------------------------------------------- columns

@dataclass(frozen=True, eq=False)
class PartColumns:
    """Parts as parallel arrays (NaN = not recorded). Built by :func:`columns_from_specs`."""

    kind: np.ndarray  # int16 index into KINDS
    id_mm: np.ndarray
    od_mm: np.ndarray
    height_mm: np.ndarray
    cs_mm: np.ndarray
    volume_cm3: np.ndarray
    hardness: np.ndarray
    material: np.ndarray  # int16 index into MATERIAL_CODES, UNKNOWN_MATERIAL or NO_MATERIAL
    any_material: np.ndarray  # bool: a standard size, orderable in the compound the seat needs
    #: +/- tolerances of d1 and d2 (mm) of round-section rings and where they come from
    #: (TOL_TABLE, TOL_ASSUMED). None: derived from the dimensions by
    #: :func:`assumed_ring_tolerances` when the ring rules need them.
    id_tol_mm: np.ndarray | None = None
    cs_tol_mm: np.ndarray | None = None
    tol_basis: np.ndarray | None = None

    def __len__(self) -> int:
        return len(self.kind)

    def take(self, index: np.ndarray) -> PartColumns:
        return PartColumns(**{name: getattr(self, name)[index] for name in _COLUMN_NAMES
                              if getattr(self, name) is not None})


_COLUMN_NAMES = ("kind", "id_mm", "od_mm", "height_mm", "cs_mm", "volume_cm3", "hardness",
                 "material", "any_material", "id_tol_mm", "cs_tol_mm", "tol_basis")

#: Where a ring's tolerances come from.
TOL_TABLE, TOL_ASSUMED = 0, 1
TOL_BASIS_TEXT = (
    "tolerances of its standard size (shipped AS568 / ISO 3601-1 table)",
    "tolerances assumed: ISO 3601-1:2012 Annex A Eq. A.1 on d1 (recalled from memory) and "
    "the nearest standard cross-section's tolerance on d2",
)


@lru_cache(maxsize=1)
def _standard_tolerances() -> dict[str, tuple[float, float]]:
    rings = standard_orings()
    return {str(d): (float(it), float(ct)) for d, it, ct in
            zip(rings.designation, rings.id_tol_mm, rings.cs_tol_mm, strict=True)}


def assumed_ring_tolerances(id_mm: Any, cs_mm: Any) -> tuple[np.ndarray, np.ndarray]:
    """(+/- d1, +/- d2) in mm for rings of no standard size: d1 by ISO 3601-1:2012 Annex A
    Eq. A.1, ``d1^0.95 x 0.009 + 0.11`` (recalled from memory, REFERENCE.md 1.1); d2 the
    tolerance of the nearest cross-section in the shipped AS568 / ISO 3601-1 tables."""
    d1 = np.asarray(id_mm, dtype=float)
    d2 = np.asarray(cs_mm, dtype=float)
    with np.errstate(invalid="ignore"):
        id_tol = np.where(d1 > 0, np.abs(d1) ** 0.95 * 0.009 + 0.11, np.nan)
    rings = standard_orings()
    cs_values, first = np.unique(rings.cs_mm, return_index=True)
    cs_tols = rings.cs_tol_mm[first]
    nearest = np.abs(np.nan_to_num(d2, nan=0.0)[..., None] - cs_values).argmin(axis=-1)
    cs_tol = np.where(np.isnan(d2), np.nan, cs_tols[nearest])
    return id_tol, cs_tol


def ring_tolerances(spec: PartSpec) -> tuple[float, float, int]:
    """(+/- d1, +/- d2, basis) of one ring: its standard size's table row when the part
    names one, else :func:`assumed_ring_tolerances`."""
    if spec.standard:
        hit = _standard_tolerances().get(normalise_designation(spec.standard))
        if hit is not None:
            return hit[0], hit[1], TOL_TABLE
    id_tol, cs_tol = assumed_ring_tolerances(_f(spec.id_mm), _f(spec.cs_mm))
    return float(id_tol), float(cs_tol), TOL_ASSUMED


def material_code(code: str | None) -> int:
    key = normalise_material(code)
    if key is None:
        return NO_MATERIAL
    return MATERIAL_CODE.get(key, UNKNOWN_MATERIAL)


def _f(value: float | None) -> float:
    return math.nan if value is None else float(value)


def columns_from_specs(specs: Sequence[PartSpec]) -> PartColumns:
    """Columns for a list of parts. Round-section rings missing an outside diameter or height
    get ``id + 2 cs`` and ``cs`` (used by matching; the ring rules read id and cs only)."""
    n = len(specs)
    kind = np.empty(n, dtype=np.int16)
    cols = {name: np.empty(n, dtype=float) for name in
            ("id_mm", "od_mm", "height_mm", "cs_mm", "volume_cm3", "hardness")}
    mat = np.empty(n, dtype=np.int16)
    any_mat = np.zeros(n, dtype=bool)
    id_tol = np.full(n, math.nan)
    cs_tol = np.full(n, math.nan)
    basis = np.full(n, TOL_ASSUMED, dtype=np.int8)
    for i, p in enumerate(specs):
        k = PartKind(p.kind)
        kind[i] = KIND_CODE[k]
        idm, od, h, cs = _f(p.id_mm), _f(p.od_mm), _f(p.height_mm), _f(p.cs_mm)
        if k in ROUND_SECTION:
            if math.isnan(od):
                od = idm + 2.0 * cs
            if math.isnan(h):
                h = cs
            id_tol[i], cs_tol[i], basis[i] = ring_tolerances(p)
        cols["id_mm"][i], cols["od_mm"][i], cols["height_mm"][i], cols["cs_mm"][i] = idm, od, h, cs
        cols["volume_cm3"][i] = _f(p.volume_cm3)
        cols["hardness"][i] = _f(p.hardness_shore_a)
        mat[i] = material_code(p.material)
        any_mat[i] = p.material is None and p.standard is not None
    return PartColumns(kind=kind, material=mat, any_material=any_mat, id_tol_mm=id_tol,
                       cs_tol_mm=cs_tol, tol_basis=basis, **cols)


# ----------------------------------------------------------------------------- checks

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


def _check(name: str, value: np.ndarray, limit: Limit, source: str, note: str = "") -> RawCheck:
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


def _range_check(name: str, nominal: np.ndarray, low: np.ndarray, high: np.ndarray,
                 limit: Limit, source: str, note: str = "") -> RawCheck:
    status, driver = range_status(limit, nominal, low, high)
    return RawCheck(name, nominal, limit.text(), status, source, limit.unit, note,
                    low=np.asarray(low, dtype=float), high=np.asarray(high, dtype=float),
                    driver=driver)


def _seat_problem(n: int, message: str) -> list[RawCheck]:
    return [RawCheck("seat data", None, message, np.full(n, FAIL, dtype=np.int8), SRC_CP)]


#: The seat values a radial gland is described by: the surface the seal runs on, the groove
#: diameter and the groove width.
RADIAL = {
    Gland.PISTON: ("bore_mm", "groove_mm", "groove_width_mm"),
    Gland.ROD: ("rod_mm", "groove_mm", "groove_width_mm"),
}


def _need(seat: SeatSpec, *names: str) -> dict[str, float] | str:
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
            table[KIND_CODE[part_k]] = _STATUS_CODE[status]
    return table


def material_status_table(medium: Medium, rules: FitRules) -> np.ndarray:
    """Status per material code for a seat medium; the last two slots are an unknown code
    and a material not recorded (index -1)."""
    unknown = _STATUS_CODE[rules.unknown_material_status]
    table = [_STATUS_CODE[MEDIUM_STATUS[(Medium(medium), MATERIALS[m].oil)]]
             for m in MATERIAL_CODES]
    return np.asarray(table + [unknown, unknown], dtype=np.int8)


# ------------------------------------------------------------------ rule sets per kind

def _squeeze_limit(seat: SeatSpec, rules: FitRules) -> Limit:
    if Motion(seat.motion) == Motion.STATIC:
        return rules.squeeze_static
    if Medium(seat.medium) == Medium.AIR:
        return rules.squeeze_dynamic_air
    return rules.squeeze_dynamic_oil


def _swell(seat: SeatSpec, rules: FitRules) -> float:
    return rules.swell_pct_dry if Medium(seat.medium) == Medium.NONE else rules.swell_pct_wetted


def _class_limits(nominal: float, fit: str | None, default: str, role: str,
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


def _ring_rules(c: PartColumns, seat: SeatSpec, rules: FitRules) -> list[RawCheck]:
    """Stretch, squeeze and fill at nominal sizes and over the tolerance range.

    The range runs over the ring's d1 and d2 limits and the seat's ISO 286 limits (bore
    and groove root of a piston gland, rod and groove of a rod gland, the bolt of a face
    seal when it has a class). The minimum squeeze and fill use the smaller stretched
    cross-section (larger reduction), the maximum the larger one (REFERENCE.md 2,
    corrected); the nominal uses constant volume.

    Squeeze ``1 - t / d2'`` and fill grow with d2' and fall with t; d2' grows with d2 and
    with d1 (less stretch), and the outer diameter (bore, rod-gland groove, counterbore)
    moves only t or the face width. So the minimum takes d1 and d2 low and the outer
    diameter high, the maximum the opposite; only the inner diameter (groove root, rod,
    bolt) moves both t and the stretch, and both of its limits are tried.
    """
    gland = Gland(seat.gland)
    d1, d2 = c.id_mm, c.cs_mm
    if gland in RADIAL:
        g = _need(seat, *RADIAL[gland])
    elif gland == Gland.FACE:
        g = _need(seat, "rod_mm", "bore_mm", "housing_depth_mm")
    else:
        return _seat_problem(len(c), f"no O-ring rules for a {gland} gland")
    if isinstance(g, str):
        return _seat_problem(len(c), g)
    if gland == Gland.PISTON:
        outer = _class_limits(g["bore_mm"], seat.bore_fit, rules.default_bore_fit, HOLE,
                              "bore")
        inner = _class_limits(g["groove_mm"], None, rules.default_piston_groove_fit, SHAFT,
                              "groove root")
    elif gland == Gland.ROD:
        outer = _class_limits(g["groove_mm"], None, rules.default_rod_groove_fit, HOLE,
                              "groove")
        inner = _class_limits(g["rod_mm"], seat.rod_fit, rules.default_rod_fit, SHAFT, "rod")
    else:  # face seal round a bolt: the bolt's class when given; depth and counterbore nominal
        outer = (g["bore_mm"], g["bore_mm"], f"counterbore {g['bore_mm']:g} and depth "
                 f"{g['housing_depth_mm']:g} nominal")
        inner = (_class_limits(g["rod_mm"], seat.rod_fit, "", SHAFT, "bolt") if seat.rod_fit
                 else (g["rod_mm"], g["rod_mm"], f"bolt {g['rod_mm']:g} nominal (no class)"))
    for lim in (outer, inner):
        if isinstance(lim, str):
            return _seat_problem(len(c), lim)
    assert not isinstance(outer, str) and not isinstance(inner, str)
    seat_text = f"{outer[2]}; {inner[2]}"
    if gland == Gland.PISTON:
        def geometry(o, i):  # d_seat, depth, width
            return i, (o - i) / 2.0, g["groove_width_mm"]
        nominal_oi = (g["bore_mm"], g["groove_mm"])
    elif gland == Gland.ROD:
        def geometry(o, i):
            return i, (o - i) / 2.0, g["groove_width_mm"]
        nominal_oi = (g["groove_mm"], g["rod_mm"])
    else:
        def geometry(o, i):
            return i, g["housing_depth_mm"], (o - i) / 2.0
        nominal_oi = (g["bore_mm"], g["rod_mm"])
    id_tol, cs_tol = c.id_tol_mm, c.cs_tol_mm
    if id_tol is None or cs_tol is None:
        id_tol, cs_tol = assumed_ring_tolerances(d1, d2)
    swell = 1.0 + _swell(seat, rules) / 100.0
    with np.errstate(divide="ignore", invalid="ignore"):
        d_seat, depth, width = geometry(*nominal_oi)
        stretch = (d_seat - d1) / d1 * 100.0
        d2s = np.asarray(stretched_cross_section(d1, d2, d_seat))
        squeeze = (d2s - depth) / d2s * 100.0
        fill = np.pi * d2s * d2s / 4.0 / (width * depth) * 100.0 * swell
        d1_lo, d1_hi, d2_lo, d2_hi = d1 - id_tol, d1 + id_tol, d2 - cs_tol, d2 + cs_tol
        lows, highs, depths = [], [], []
        for inner_mm in (inner[0], inner[1]):
            ds_lo, t_lo, w_lo = geometry(outer[1], inner_mm)  # outer high: deepest
            small, _ = cross_section_bounds(d1_lo, d2_lo, ds_lo)
            ds_hi, t_hi, w_hi = geometry(outer[0], inner_mm)  # outer low: shallowest
            _, large = cross_section_bounds(d1_hi, d2_hi, ds_hi)
            lows.append(((small - t_lo) / small * 100.0,
                         np.pi * small * small / 4.0 / (w_lo * t_lo) * 100.0 * swell,
                         outer[1] - (d1_lo + 2.0 * small)))
            highs.append(((large - t_hi) / large * 100.0,
                          np.pi * large * large / 4.0 / (w_hi * t_hi) * 100.0 * swell,
                          outer[0] - (d1_hi + 2.0 * large)))
            depths += [t_lo, t_hi]
        sq_lo, fill_lo, room_hi = (np.minimum(a, b) if i < 2 else np.maximum(a, b)
                                   for i, (a, b) in enumerate(zip(*lows, strict=True)))
        sq_hi, fill_hi, room_lo = (np.maximum(a, b) if i < 2 else np.minimum(a, b)
                                   for i, (a, b) in enumerate(zip(*highs, strict=True)))
        stretch_lo = (inner[0] - d1_hi) / d1_hi * 100.0
        stretch_hi = (inner[1] - d1_lo) / d1_lo * 100.0
    squeeze_limit = rules.squeeze_static if gland == Gland.FACE else _squeeze_limit(seat, rules)
    regime = "static" if squeeze_limit is rules.squeeze_static else (
        "dynamic, air" if squeeze_limit is rules.squeeze_dynamic_air else "dynamic, oil")
    depth_text = (f"radial depth {depth:.3f} mm nominal, {float(np.min(depths)):.3f}-"
                  f"{float(np.max(depths)):.3f} over the seat limits")
    out = [
        _range_check("installed stretch", stretch, stretch_lo, stretch_hi, rules.stretch,
                     SRC_STRETCH,
                     note=f"range over ring and seat tolerances; {seat_text}"),
        _range_check("squeeze", squeeze, sq_lo, sq_hi, squeeze_limit, SRC_GLAND,
                     note=f"{regime} range; cross-section reduced by stretch (nominal: "
                          f"constant volume; minimum: the larger, maximum: the smaller of "
                          f"the handbook and constant-volume reductions); {depth_text}"),
        _range_check("gland fill", fill, fill_lo, fill_hi, rules.fill, SRC_FILL,
                     note=f"includes {_swell(seat, rules):g} % swell; groove width nominal"),
    ]
    if gland == Gland.FACE:
        room = g["bore_mm"] - (d1 + 2.0 * d2s)
        out.append(_range_check("room to counterbore", room, room_lo, room_hi,
                                rules.face_outer_room, SRC_CP))
    return out


def _lip_rules(c: PartColumns, seat: SeatSpec, rules: FitRules) -> list[RawCheck]:
    gland = Gland(seat.gland)
    if gland not in RADIAL:
        return _seat_problem(len(c), f"no lip-seal rules for a {gland} gland")
    g = _need(seat, *RADIAL[gland])
    if isinstance(g, str):
        return _seat_problem(len(c), g)
    section = (c.od_mm - c.id_mm) / 2.0
    with np.errstate(divide="ignore", invalid="ignore"):
        if gland == Gland.ROD:
            depth = (g["groove_mm"] - g["rod_mm"]) / 2.0
            contact = (g["rod_mm"] - c.id_mm) / g["rod_mm"] * 100.0
            contact_name = "lip contact on rod"
        else:
            depth = (g["bore_mm"] - g["groove_mm"]) / 2.0
            contact = (c.od_mm - g["bore_mm"]) / g["bore_mm"] * 100.0
            contact_name = "lip contact in bore"
        interference = (section - depth) / section * 100.0
        axial = (g["groove_width_mm"] - c.height_mm) / c.height_mm * 100.0
    return [
        _check("section interference", interference, rules.lip_section_interference,
               SRC_CP, note=f"gland depth {depth:.3f} mm"),
        _check(contact_name, contact, rules.lip_contact, SRC_CP),
        _check("axial clearance in groove", axial, rules.lip_axial_clearance, SRC_CP),
    ]


def _bore_limits(bore: float, bore_fit: str | None,
                 rules: FitRules) -> tuple[float, float, str] | str:
    """The housing bore's ISO 286 limits, or the problem as text (no fall-back to nominal)."""
    return _class_limits(bore, bore_fit, rules.default_bore_fit, HOLE, "bore")


def _wiper_in_groove(c: PartColumns, seat: SeatSpec, rules: FitRules) -> list[RawCheck]:
    """A scraper or wiper held in a rod-gland groove (an air-shaft seal head): lip on the
    rod, outside diameter in the groove, height in the groove width."""
    g = _need(seat, *RADIAL[Gland.ROD])
    if isinstance(g, str):
        return _seat_problem(len(c), g)
    rod, groove = g["rod_mm"], g["groove_mm"]
    return [
        _check("lip interference on rod", (rod - c.id_mm) / rod * 100.0,
               rules.wiper_lip_interference, SRC_CP),
        _check("outside in groove", (c.od_mm - groove) / groove * 100.0,
               rules.wiper_groove_fit, SRC_CP, note=f"groove diameter {groove:g} mm"),
        _check("axial clearance in groove", g["groove_width_mm"] - c.height_mm,
               rules.wiper_groove_axial, SRC_CP),
    ]


def _wiper_rules(c: PartColumns, seat: SeatSpec, rules: FitRules) -> list[RawCheck]:
    if Gland(seat.gland) == Gland.ROD:
        return _wiper_in_groove(c, seat, rules)
    if Gland(seat.gland) != Gland.HOUSING:
        return _seat_problem(len(c), f"no wiper rules for a {seat.gland} gland")
    g = _need(seat, "rod_mm", "bore_mm")
    if isinstance(g, str):
        return _seat_problem(len(c), g)
    rod, bore = g["rod_mm"], g["bore_mm"]
    bore_limits = _bore_limits(bore, seat.bore_fit, rules)
    if isinstance(bore_limits, str):
        return _seat_problem(len(c), bore_limits)
    low, high, note = bore_limits
    out = [
        _check("lip interference on stanchion", (rod - c.id_mm) / rod * 100.0,
               rules.wiper_lip_interference, SRC_CP),
        _check("press fit at largest bore", (c.od_mm - high) / bore * 100.0,
               rules.wiper_press_fit_loosest, SRC_ISO286, note),
        _check("press fit at smallest bore", (c.od_mm - low) / bore * 100.0,
               rules.wiper_press_fit_tightest, SRC_ISO286, note),
    ]
    depth = seat.housing_depth_mm
    if depth is not None:
        out.append(_check("height above housing depth", c.height_mm - depth,
                          rules.wiper_protrusion, SRC_CP))
    return out


def _glide_rules(c: PartColumns, seat: SeatSpec, rules: FitRules) -> list[RawCheck]:
    """A PTFE guide band in a groove: band width against groove width, band thickness
    against groove depth (the guiding play) and the free band against its running surface.

    Piston gland: depth ``(bore - groove root) / 2``, running clearance ``bore - od``.
    Rod gland (a guide band in a seal head): depth ``(groove - rod) / 2``, running
    clearance ``id - rod``. Thickness is ``(od - id) / 2``.
    """
    gland = Gland(seat.gland)
    if gland not in RADIAL:
        return _seat_problem(len(c), f"no glide-ring rules for a {gland} gland")
    g = _need(seat, *RADIAL[gland])
    if isinstance(g, str):
        return _seat_problem(len(c), g)
    thickness = (c.od_mm - c.id_mm) / 2.0
    if gland == Gland.PISTON:
        depth = (g["bore_mm"] - g["groove_mm"]) / 2.0
        running, surface = g["bore_mm"] - c.od_mm, "bore"
    else:
        depth = (g["groove_mm"] - g["rod_mm"]) / 2.0
        running, surface = c.id_mm - g["rod_mm"], "rod"
    return [
        _check("axial clearance in groove", g["groove_width_mm"] - c.height_mm,
               rules.glide_axial_clearance, SRC_GLIDE),
        _check("radial play (depth - thickness)", depth - thickness, rules.glide_radial_play,
               SRC_GLIDE, note=f"groove depth {depth:.3f} mm"),
        _check(f"clearance to {surface}", running, rules.glide_running_clearance, SRC_GLIDE,
               note="diametral, free band"),
    ]


def _foam_rules(c: PartColumns, seat: SeatSpec, rules: FitRules) -> list[RawCheck]:
    g = _need(seat, "rod_mm", "bore_mm")
    if isinstance(g, str):
        return _seat_problem(len(c), g)
    rod, bore = g["rod_mm"], g["bore_mm"]
    out = [
        _check("inside on stanchion", (rod - c.id_mm) / rod * 100.0,
               rules.foam_id_interference, SRC_CP),
        _check("outside against pocket bore", (c.od_mm - bore) / bore * 100.0,
               rules.foam_od_interference, SRC_CP),
    ]
    depth = seat.housing_depth_mm
    if depth:
        out.append(_check("thickness over pocket depth", c.height_mm / depth,
                          rules.foam_height_ratio, SRC_CP))
    return out


def _bumper_rules(c: PartColumns, seat: SeatSpec, rules: FitRules) -> list[RawCheck]:
    g = _need(seat, "rod_mm")
    if isinstance(g, str):
        return _seat_problem(len(c), g)
    with np.errstate(divide="ignore", invalid="ignore"):
        out = [_check("stretch onto shaft", (g["rod_mm"] - c.id_mm) / c.id_mm * 100.0,
                      rules.bumper_stretch, SRC_CP)]
    bore, depth = seat.bore_mm, seat.housing_depth_mm
    if bore is not None:
        out.append(_check("radial room", (bore - c.od_mm) / 2.0, rules.bumper_radial_room,
                          SRC_CP))
    if depth:
        out.append(_check("height over axial room", c.height_mm / depth,
                          rules.bumper_height_ratio, SRC_CP))
    return out


def _spacer_rules(c: PartColumns, seat: SeatSpec, rules: FitRules) -> list[RawCheck]:
    g = _need(seat, "bore_mm")
    if isinstance(g, str):
        return _seat_problem(len(c), g)
    out = [_check("radial clearance in chamber", (g["bore_mm"] - c.od_mm) / 2.0,
                  rules.spacer_radial_clearance, SRC_CP)]
    depth = seat.housing_depth_mm
    if depth is not None:
        out.append(_check("usable length left", depth - c.height_mm,
                          rules.spacer_length_room, SRC_CP))
    gas = _need(seat, "chamber_volume_cm3", "piston_mm", "travel_mm", "set_pressure_bar")
    if not isinstance(gas, str):
        # a spacer without a recorded volume counts as a solid cylinder (the safe side)
        solid = np.pi * c.od_mm * c.od_mm / 4.0 * c.height_mm / 1000.0
        volume = np.where(np.isnan(c.volume_cm3), solid, c.volume_cm3)
        for n in dict.fromkeys((1.0, rules.polytropic_n)):
            eff = spacer_end_pressure(gas["chamber_volume_cm3"], volume,
                                      piston_mm=gas["piston_mm"], travel_mm=gas["travel_mm"],
                                      set_pressure_bar=gas["set_pressure_bar"], n=n,
                                      p_atm_bar=rules.p_atm_bar)
            if n == 1.0:
                out.append(_check("compression ratio", np.asarray(eff.ratio, float),
                                  rules.spacer_compression_ratio, SRC_GAS))
            out.append(_check(f"end pressure n={n:g}",
                              np.asarray(eff.p2_gauge_bar, float), rules.spacer_end_pressure,
                              SRC_GAS, note=f"bar gauge at full travel, set "
                                                 f"{gas['set_pressure_bar']:g} bar gauge"))
    return out


def _washer_rules(c: PartColumns, seat: SeatSpec, rules: FitRules) -> list[RawCheck]:
    g = _need(seat, "rod_mm")
    if isinstance(g, str):
        return _seat_problem(len(c), g)
    out = [_check("inside clearance over bolt", c.id_mm - g["rod_mm"],
                  rules.washer_id_clearance, SRC_CP)]
    bore = seat.bore_mm
    if bore is not None:
        out.append(_check("room to counterbore", bore - c.od_mm, rules.washer_outer_room,
                          SRC_CP))
    return out


_RULE_SETS = {
    "ring": _ring_rules, "lip": _lip_rules, "wiper": _wiper_rules, "foam": _foam_rules,
    "bumper": _bumper_rules, "spacer": _spacer_rules, "washer": _washer_rules,
    "glide": _glide_rules,
}


def evaluate(c: PartColumns, seat: SeatSpec, rules: FitRules, *,
             reference_shore_a: float | None = None) -> list[RawCheck]:
    """All checks of the seat's rule set over the parts in ``c`` (kind check first).

    Parts whose kind does not go in the seat get FAIL in the kind check; the caller decides
    whether to show them (the matrix marks them NOT_APPLICABLE instead).
    """
    n = len(c)
    kinds = kind_status_table(PartKind(seat.part_kind), rules)[c.kind]
    checks = [RawCheck("kind", None, str(PartKind(seat.part_kind)),
                       np.where(kinds == NOT_APPLICABLE, FAIL, kinds).astype(np.int8), SRC_KIND)]
    family = FAMILY.get(PartKind(seat.part_kind))
    if family is None:
        return checks + _seat_problem(n, f"no fit rules for {seat.part_kind} seats")
    impossible = seat_problems(seat) + fit_class_problems(seat)
    if impossible:  # geometry that cannot exist or a class of the wrong role: no numbers
        return checks + _seat_problem(n, "; ".join(f"{col}: {msg}" for col, msg in impossible))
    checks += _RULE_SETS[family](c, seat, rules)
    if family in MATERIAL_FAMILIES:
        mat = material_status_table(Medium(seat.medium), rules)[c.material]
        mat = np.where(c.any_material, PASS, mat).astype(np.int8)
        checks.append(RawCheck("material", None, f"suits {Medium(seat.medium)}", mat,
                               SRC_MATERIAL))
        if reference_shore_a is not None and family in ELASTOMER_FAMILIES:
            diff = c.hardness - float(reference_shore_a)
            status = rules.hardness.grade(diff)
            unknown = _STATUS_CODE[rules.unknown_hardness_status]
            status = np.where(np.isnan(diff) & ~c.any_material, unknown, status)
            status = np.where(np.isnan(diff) & c.any_material, PASS, status).astype(np.int8)
            checks.append(RawCheck("hardness", diff, rules.hardness.text(), status,
                                   SRC_HARDNESS, "Shore A",
                                   f"difference to the reference {reference_shore_a:g} Shore A"))
    return checks


def worst(checks: Sequence[RawCheck]) -> np.ndarray:
    """Worst status per part over the checks (the verdict code)."""
    return np.maximum.reduce([ch.status for ch in checks]).astype(np.int8)
