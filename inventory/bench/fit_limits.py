"""Fit thresholds, status and kind codes, and the sources shown beside each check.

Thresholds live in :class:`FitRules`, a frozen dataclass whose defaults carry their source:
REFERENCE.md section, textbook "(recalled from memory)" or "(common practice)". The rule
sets that apply them are in :mod:`inventory.bench.fit_rules`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

from inventory.bench.seals import MATERIALS, normalise_material
from inventory.core.model import PartKind

if TYPE_CHECKING:  # numpy loads when a rule grades values (match reads without it)
    import numpy as np

P_ATM_BAR = 1.01325  # standard atmosphere, bar (ISO 2533)

PASS, MARGINAL, FAIL = 0, 1, 2
NOT_APPLICABLE = -1  # the part's kind does not go in the seat (matrix only)
STATUS_NAMES = ("pass", "marginal", "fail")
STATUS_CODE = {name: code for code, name in enumerate(STATUS_NAMES)}

KINDS: tuple[PartKind, ...] = tuple(PartKind)
KIND_CODE = {k: i for i, k in enumerate(KINDS)}
MATERIAL_CODES: tuple[str, ...] = tuple(MATERIALS)
MATERIAL_CODE = {m: i for i, m in enumerate(MATERIAL_CODES)}
UNKNOWN_MATERIAL = len(MATERIAL_CODES)  # a code not in MATERIALS
NO_MATERIAL = -1  # material not recorded (indexes the last slot of a lookup table)

def material_code(code: str | None) -> int:
    """Code of a material (index in MATERIAL_CODES), UNKNOWN_MATERIAL for a code not in
    the table, NO_MATERIAL when none is recorded."""
    key = normalise_material(code)
    if key is None:
        return NO_MATERIAL
    return MATERIAL_CODE.get(key, UNKNOWN_MATERIAL)


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
        import numpy as np

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
