"""Plain, immutable records the pure core works on.

The database edge (``inventory.core.tables`` and each feature's queries) and the spreadsheet
edge (``inventory.sheets``) convert to and from these; this module and the other pure modules
(listed in the import contracts) touch no database or file.
Lengths are millimetres (floats), money is ``Decimal``, quantities are ``int``.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from decimal import Decimal
from enum import StrEnum


class PartKind(StrEnum):
    """What a part is. Seal kinds use the trade's own generic terms."""

    O_RING = "o_ring"
    X_RING = "x_ring"  # four-lobe / X-section ring
    U_CUP = "u_cup"
    DUST_WIPER = "dust_wiper"
    SCRAPER_SEAL = "scraper_seal"
    FOAM_RING = "foam_ring"
    GLIDE_RING = "glide_ring"
    TOP_OUT_BUMPER = "top_out_bumper"
    VOLUME_SPACER = "volume_spacer"
    CRUSH_WASHER = "crush_washer"
    OIL = "oil"
    GREASE = "grease"
    KIT = "kit"


class Gland(StrEnum):
    """How a seat holds its part."""

    ROD = "rod"  # groove in the outer member, seal acts on a rod/shaft/stanchion
    PISTON = "piston"  # groove in the inner member, seal acts on a bore
    HOUSING = "housing"  # pressed into a housing bore, lip on a rod (wipers, foam rings)
    FACE = "face"  # axial/face seal or washer under a bolt head
    CHAMBER = "chamber"  # air chamber (volume spacers)
    SHAFT = "shaft"  # sits on a shaft with radial room around it (top-out bumpers)


class Motion(StrEnum):
    STATIC = "static"
    DYNAMIC = "dynamic"


class Medium(StrEnum):
    OIL = "oil"  # oil-wetted (damper, lower-leg bath, lubricated air spring)
    AIR = "air"  # dry air, grease only
    NONE = "none"


class SpringLayout(StrEnum):
    AIR_COIL_NEGATIVE = "air_coil_negative"
    AIR_AIR_NEGATIVE = "air_air_negative"
    COIL = "coil"


class ServiceLevel(StrEnum):
    LOWER_LEG = "lower_leg"
    AIR_SPRING = "air_spring"
    DAMPER = "damper"


@dataclass(frozen=True, slots=True)
class PartSpec:
    """A part as the fit and match rules see it. Absent dimensions are ``None``."""

    code: str
    kind: PartKind
    description: str = ""
    id_mm: float | None = None  # inside diameter (d1 for O-rings)
    od_mm: float | None = None  # outside diameter
    height_mm: float | None = None  # axial width / height
    cs_mm: float | None = None  # cross-section (d2) of round and X-section rings
    material: str | None = None  # ISO 1629 style code: NBR, HNBR, FKM, AU, EU, PTFE, EPDM, ...
    hardness_shore_a: int | None = None
    volume_cm3: float | None = None  # displaced volume of a volume spacer
    unit: str = "each"
    standard: str | None = None  # e.g. "AS568-214", "ISO3601 31.5x3.55"


@dataclass(frozen=True, slots=True)
class SeatSpec:
    """A place in a fork family where one kind of part goes, with its geometry.

    Which fields matter depends on ``gland``:
    - ROD: ``rod_mm`` (shaft), ``groove_mm`` (groove outer diameter), ``groove_width_mm``.
    - PISTON: ``bore_mm`` (cylinder bore), ``groove_mm`` (groove root diameter),
      ``groove_width_mm``.
    - HOUSING: ``rod_mm`` (stanchion), ``bore_mm`` (housing bore), ``housing_depth_mm``,
      ``bore_fit`` (ISO 286 class of the housing bore, e.g. "H8"), ``rod_fit``.
    - SHAFT: ``rod_mm`` (shaft it sits on), ``bore_mm`` (room around it),
      ``housing_depth_mm`` (axial room).
    - CHAMBER: ``bore_mm`` (chamber bore), ``housing_depth_mm`` (usable length for spacers),
      ``chamber_volume_cm3`` (positive chamber volume at full extension, no spacer),
      ``piston_mm``, ``travel_mm``, ``set_pressure_bar`` (gauge).
    - FACE: ``rod_mm`` (bolt), ``bore_mm`` (counterbore), ``groove_width_mm`` unused.
    """

    fork: str
    seat: str
    position: str  # role in the fork: dust_wiper, foam_ring, air_piston, air_shaft_head, ...
    part_kind: PartKind
    gland: Gland
    motion: Motion = Motion.STATIC
    medium: Medium = Medium.OIL
    qty_per_fork: int = 1
    rod_mm: float | None = None
    bore_mm: float | None = None
    groove_mm: float | None = None
    groove_width_mm: float | None = None
    housing_depth_mm: float | None = None
    rod_fit: str | None = None
    bore_fit: str | None = None
    chamber_volume_cm3: float | None = None
    piston_mm: float | None = None
    travel_mm: float | None = None
    set_pressure_bar: float | None = None
    notes: str = ""


@dataclass(frozen=True, slots=True)
class ForkFamilySpec:
    code: str
    description: str
    stanchion_mm: float
    travel_min_mm: int
    travel_max_mm: int
    spring: SpringLayout
    year_from: int
    year_to: int | None = None


@dataclass(frozen=True, slots=True)
class KitSpec:
    code: str
    fork: str
    service_level: ServiceLevel
    lines: tuple[tuple[str, int], ...] = field(default_factory=tuple)  # (part code, qty)


@dataclass(frozen=True, slots=True)
class SupplierItemSpec:
    supplier: str
    part: str
    unit_cost: Decimal
    pack_size: int = 1
    min_order_qty: int = 1
    lead_time_days: int | None = None  # overrides the supplier's when set
    supplier_code: str = ""
