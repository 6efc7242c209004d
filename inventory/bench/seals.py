"""Seal kinds, the dimensions each needs, plausible ranges, materials and shelf life.

- :data:`KIND_DIMENSIONS`: which of ``id_mm``, ``od_mm``, ``height_mm``, ``cs_mm`` (and
  ``volume_cm3``) describe a part of each kind.
- :data:`PLAUSIBLE_MM`: generous ranges per kind and dimension, only for catching typing
  mistakes (a cross-section of 35 mm, an inch value typed without its unit). Common practice,
  chosen to cover bicycle suspension and the standard O-ring series; not fit limits.
- :data:`MATERIALS`: ISO 1629 polymer codes with their mineral-oil compatibility
  (REFERENCE.md 6, common practice / textbook) and ISO 2230 shelf-life group (REFERENCE.md 5).
- :func:`storage_limit`: the last day a lot may be fitted, counted from the end of its cure
  quarter (common practice, REFERENCE.md 5).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from datetime import date
from functools import lru_cache
from types import MappingProxyType

from inventory.bench.sizes import ISO2230_FILE, read_standard_csv
from inventory.core.cure import parse_quarter
from inventory.core.cure import quarter_end as cure_quarter_end
from inventory.core.model import Medium, PartKind
from inventory.core.units import Length, check_range, read_length

DIMENSIONS = ("id_mm", "od_mm", "height_mm", "cs_mm")

#: The dimensions that identify a part of each kind (matching and fit use these).
KIND_DIMENSIONS: Mapping[PartKind, tuple[str, ...]] = MappingProxyType({
    PartKind.O_RING: ("id_mm", "cs_mm"),
    PartKind.X_RING: ("id_mm", "cs_mm"),
    PartKind.U_CUP: ("id_mm", "od_mm", "height_mm"),
    PartKind.DUST_WIPER: ("id_mm", "od_mm", "height_mm"),
    PartKind.SCRAPER_SEAL: ("id_mm", "od_mm", "height_mm"),
    PartKind.FOAM_RING: ("id_mm", "od_mm", "height_mm"),
    PartKind.GLIDE_RING: ("id_mm", "od_mm", "height_mm"),
    PartKind.TOP_OUT_BUMPER: ("id_mm", "od_mm", "height_mm"),
    PartKind.VOLUME_SPACER: ("od_mm", "height_mm", "volume_cm3"),
    PartKind.CRUSH_WASHER: ("id_mm", "od_mm", "height_mm"),
})

#: Round-section rings: a missing outside diameter is ``id + 2 cs`` and the height is ``cs``.
ROUND_SECTION = frozenset({PartKind.O_RING, PartKind.X_RING})

_KIND_LABEL = {
    PartKind.O_RING: "O-ring",
    PartKind.X_RING: "X-ring",
    PartKind.U_CUP: "U-cup",
    PartKind.DUST_WIPER: "dust wiper",
    PartKind.SCRAPER_SEAL: "scraper seal",
    PartKind.FOAM_RING: "foam ring",
    PartKind.GLIDE_RING: "glide ring",
    PartKind.TOP_OUT_BUMPER: "top-out bumper",
    PartKind.VOLUME_SPACER: "volume spacer",
    PartKind.CRUSH_WASHER: "crush washer",
}
_DIM_LABEL = {
    "id_mm": "inside diameter",
    "od_mm": "outside diameter",
    "height_mm": "height",
    "cs_mm": "cross-section",
    "volume_cm3": "volume",
}

#: Plausible (low, high) per kind and dimension, mm (volume in cm3). Common practice: wide
#: enough for suspension parts and the AS568 / ISO 3601-1 series, narrow enough to catch an
#: inch value typed as mm or a slipped decimal point.
PLAUSIBLE_MM: Mapping[PartKind, Mapping[str, tuple[float, float]]] = MappingProxyType({
    PartKind.O_RING: {"id_mm": (0.5, 700.0), "cs_mm": (0.5, 15.0), "od_mm": (1.5, 730.0),
                      "height_mm": (0.5, 15.0)},
    PartKind.X_RING: {"id_mm": (0.5, 700.0), "cs_mm": (0.5, 15.0), "od_mm": (1.5, 730.0),
                      "height_mm": (0.5, 15.0)},
    PartKind.U_CUP: {"id_mm": (2.0, 300.0), "od_mm": (4.0, 350.0), "height_mm": (1.0, 50.0)},
    PartKind.DUST_WIPER: {"id_mm": (3.0, 120.0), "od_mm": (5.0, 150.0),
                          "height_mm": (2.0, 40.0)},
    PartKind.SCRAPER_SEAL: {"id_mm": (3.0, 120.0), "od_mm": (5.0, 150.0),
                            "height_mm": (2.0, 40.0)},
    PartKind.FOAM_RING: {"id_mm": (3.0, 120.0), "od_mm": (5.0, 150.0), "height_mm": (1.0, 25.0)},
    PartKind.GLIDE_RING: {"id_mm": (3.0, 200.0), "od_mm": (5.0, 220.0), "height_mm": (1.0, 40.0)},
    PartKind.TOP_OUT_BUMPER: {"id_mm": (2.0, 60.0), "od_mm": (4.0, 100.0),
                              "height_mm": (1.0, 60.0)},
    PartKind.VOLUME_SPACER: {"id_mm": (1.0, 90.0), "od_mm": (5.0, 100.0),
                             "height_mm": (1.0, 150.0), "volume_cm3": (0.5, 100.0)},
    PartKind.CRUSH_WASHER: {"id_mm": (2.0, 40.0), "od_mm": (4.0, 60.0), "height_mm": (0.3, 5.0)},
})


def kind_label(kind: PartKind) -> str:
    return _KIND_LABEL.get(kind, str(kind).replace("_", " "))


def _dim_name(dim_name: str) -> str:
    name = dim_name if dim_name.endswith(("_mm", "_cm3")) else f"{dim_name}_mm"
    if name not in _DIM_LABEL:
        raise ValueError(f"unknown dimension {dim_name!r}: use id, od, height, cs or volume")
    return name


def plausible_range(kind: PartKind, dim_name: str, *,
                    ranges: Mapping[PartKind, Mapping[str, tuple[float, float]]] = PLAUSIBLE_MM,
                    ) -> tuple[float, float] | None:
    """The plausible (low, high) of one dimension of a kind, or ``None`` when not listed."""
    return ranges.get(kind, {}).get(_dim_name(dim_name))


def check_plausible(kind: PartKind, dim_name: str, mm: float | Length, *,
                    ranges: Mapping[PartKind, Mapping[str, tuple[float, float]]] = PLAUSIBLE_MM,
                    ) -> float:
    """Return ``mm`` if plausible for the kind's dimension, else raise ``ValueError``.

    Pass a :class:`~inventory.core.units.Length` (from ``read_length``) to get the inch
    hint when the number was typed without a unit: ``dust wiper inside diameter 1.26 mm is
    outside the plausible 3-120 mm; did you mean 1.26in (32.00 mm)?``.
    """
    name = _dim_name(dim_name)
    what = f"{kind_label(kind)} {_DIM_LABEL[name]}"
    span = plausible_range(kind, name, ranges=ranges)
    if span is None:
        value = mm.mm if isinstance(mm, Length) else float(mm)
        if not value > 0:
            raise ValueError(f"{what} must be positive, got {value:g}")
        return value
    return check_range(mm, span[0], span[1], what=what)


def parse_dimension(text: str | float, kind: PartKind, dim_name: str, *,
                    default_unit: str = "mm",
                    ranges: Mapping[PartKind, Mapping[str, tuple[float, float]]] = PLAUSIBLE_MM,
                    ) -> float:
    """Parse a typed dimension for a kind and check it is plausible; mm out.

    Combines :func:`~inventory.core.units.read_length` and :func:`check_plausible`, so a
    bare ``1.26`` for a wiper's inside diameter fails with a hint to write ``1.26in``.
    """
    return check_plausible(kind, dim_name, read_length(text, default_unit), ranges=ranges)


# ----------------------------------------------------------------------------- materials

@dataclass(frozen=True, slots=True)
class Material:
    """A polymer family as the fit rules see it.

    ``oil`` is the mineral-oil rating of REFERENCE.md 6: ``"good"``, ``"fair"`` or
    ``"poor"``; ``elastomer`` is False for plastics and metals (no hardness or shelf-life
    checks); ``family`` groups near-equivalents for match scoring.
    """

    code: str
    name: str
    oil: str
    family: str
    elastomer: bool = True


MATERIALS: Mapping[str, Material] = MappingProxyType({
    m.code: m
    for m in (
        Material("NBR", "nitrile", "good", "nitrile"),
        Material("HNBR", "hydrogenated nitrile", "good", "nitrile"),
        Material("XNBR", "carboxylated nitrile", "good", "nitrile"),
        Material("FKM", "fluoroelastomer", "good", "fluoro"),
        Material("FFKM", "perfluoroelastomer", "good", "fluoro"),
        Material("AU", "polyester urethane", "good", "urethane"),
        Material("EU", "polyether urethane", "good", "urethane"),
        Material("PU", "polyurethane (type not stated)", "good", "urethane"),
        Material("PU-FOAM", "open-cell polyurethane foam", "good", "foam"),
        Material("ACM", "polyacrylate", "good", "acrylic"),
        Material("AEM", "ethylene acrylic", "good", "acrylic"),
        Material("ECO", "epichlorohydrin", "good", "other"),
        Material("CR", "chloroprene", "fair", "other"),
        Material("FVMQ", "fluorosilicone", "good", "silicone"),
        Material("VMQ", "silicone", "fair", "silicone"),
        Material("EPDM", "ethylene propylene diene", "poor", "epdm"),
        Material("IIR", "butyl", "poor", "other"),
        Material("NR", "natural rubber", "poor", "other"),
        Material("IR", "isoprene", "poor", "other"),
        Material("BR", "butadiene", "poor", "other"),
        Material("SBR", "styrene butadiene", "poor", "other"),
        Material("CSM", "chlorosulfonated polyethylene", "fair", "other"),
        Material("PTFE", "polytetrafluoroethylene", "good", "ptfe", elastomer=False),
        Material("POM", "acetal", "good", "plastic", elastomer=False),
        Material("PA", "polyamide", "good", "plastic", elastomer=False),
        Material("CU", "copper", "good", "metal", elastomer=False),
        Material("AL", "aluminium", "good", "metal", elastomer=False),
    )
})

_ALIASES = {"TPU": "PU", "PUR": "PU", "NITRILE": "NBR", "SILICONE": "VMQ",
            "FOAM": "PU-FOAM", "PU FOAM": "PU-FOAM", "PU_FOAM": "PU-FOAM", "COPPER": "CU", "ALUMINIUM": "AL",
            "ALUMINUM": "AL", "ACETAL": "POM", "NYLON": "PA"}


def normalise_material(code: str | None) -> str | None:
    """Upper-case ISO 1629 code for a typed material (aliases resolved); ``None`` stays."""
    if code is None:
        return None
    key = " ".join(code.strip().upper().split())
    if not key:
        return None
    return _ALIASES.get(key, key)


def material(code: str) -> Material | None:
    """The :class:`Material` for a code, or ``None`` when the code is not known."""
    key = normalise_material(code)
    return MATERIALS.get(key) if key else None


#: (medium, oil rating) -> status. Oil-wetted seats need a "good" rating; EPDM ("poor")
#: never goes in oil (REFERENCE.md 6). Greased air seats: mineral grease swells a "poor"
#: polymer too, so it is marginal there (common practice).
MEDIUM_STATUS: Mapping[tuple[Medium, str], str] = MappingProxyType({
    (Medium.OIL, "good"): "pass",
    (Medium.OIL, "fair"): "marginal",
    (Medium.OIL, "poor"): "fail",
    (Medium.AIR, "good"): "pass",
    (Medium.AIR, "fair"): "pass",
    (Medium.AIR, "poor"): "marginal",
    (Medium.NONE, "good"): "pass",
    (Medium.NONE, "fair"): "pass",
    (Medium.NONE, "poor"): "pass",
})


def medium_status(code: str | None, medium: Medium, *,
                  table: Mapping[tuple[Medium, str], str] = MEDIUM_STATUS,
                  unknown: str = "marginal") -> tuple[str, str]:
    """(status, reason) for a polymer in a seat's medium; unknown or missing -> ``unknown``."""
    key = normalise_material(code)
    if key is None:
        return unknown, "material not recorded"
    mat = MATERIALS.get(key)
    if mat is None:
        return unknown, f"unknown material {key}: check fluid compatibility by hand"
    status = table[(Medium(medium), mat.oil)]
    return status, f"{key} ({mat.name}): {mat.oil} in mineral oil, seat medium {medium}"


#: The medium a part of each kind usually works in inside a suspension fork, used to flag
#: a polymer when no seat is named: dampers, lower-leg baths and air springs all carry
#: suspension oil or grease, so every seal kind meets mineral oil (common practice).
#: Volume spacers and crush washers are not rated.
USUAL_MEDIUM: Mapping[PartKind, Medium] = MappingProxyType({
    k: Medium.OIL for k in (PartKind.O_RING, PartKind.X_RING, PartKind.U_CUP,
                            PartKind.DUST_WIPER, PartKind.SCRAPER_SEAL, PartKind.FOAM_RING,
                            PartKind.GLIDE_RING, PartKind.TOP_OUT_BUMPER)
})


def usual_medium_status(kind: PartKind, code: str | None) -> tuple[str, str]:
    """(status, reason) of a polymer in the usual medium of its kind (:data:`USUAL_MEDIUM`);
    ``("pass", "")`` for kinds that are not rated or a material not recorded."""
    medium = USUAL_MEDIUM.get(PartKind(kind))
    if medium is None or normalise_material(code) is None:
        return "pass", ""
    status, reason = medium_status(code, medium)
    if status == "pass":
        return status, ""
    key = normalise_material(code)
    mat = MATERIALS.get(key or "")
    why = (f"{key}: {mat.oil} in mineral oil, the usual medium of {_KIND_LABEL[kind]}s"
           if mat else reason)
    return status, why


# ------------------------------------------------------------------------- shelf life

@dataclass(frozen=True, slots=True)
class ShelfLifeGroup:
    group: str
    initial_years: int
    extension_years: int


@lru_cache(maxsize=1)
def _iso2230() -> dict[str, ShelfLifeGroup]:
    _, rows = read_standard_csv(ISO2230_FILE)
    return {
        r["polymer"]: ShelfLifeGroup(r["group"], int(r["initial_years"]),
                                     int(r["extension_years"]))
        for r in rows
    }


def shelf_life_group(code: str | None) -> ShelfLifeGroup | None:
    """ISO 2230 group of a polymer. Polyurethane stated only as PU counts as group A (as AU
    and EU are). ``None`` for plastics and metals (outside ISO 2230); ``ValueError`` for a
    code that is not a known material."""
    key = normalise_material(code)
    if key is None:
        raise ValueError("no material given")
    groups = _iso2230()
    if key in ("PU", "PU-FOAM"):
        return groups["AU"]
    if key in groups:
        return groups[key]
    if key in MATERIALS:
        return None
    raise ValueError(f"unknown material {key!r}: no ISO 2230 shelf-life group")


def parse_cure_quarter(text: str) -> tuple[int, int]:
    """``"2026Q3"``, ``"Q3 2026"``, ``"3Q26"`` or ``"3/26"`` -> ``(2026, 3)`` (see
    :func:`inventory.core.cure.parse_quarter`)."""
    canonical = parse_quarter(text or "")
    return int(canonical[:4]), int(canonical[5])


def quarter_end(year: int, quarter: int) -> date:
    return cure_quarter_end(f"{year:04d}Q{quarter}")


def storage_limit(cure_quarter: str, material: str, *, extended: bool = False) -> date | None:
    """Last day a lot may be fitted under ISO 2230, or ``None`` outside its scope.

    Counts the group's initial period (plus the extension period when the lot passed its
    inspection, ``extended=True``) from the end of the cure quarter, as the trade does
    (REFERENCE.md 5, common practice). Group periods from ISO 2230:2002 clause 4.
    ``None`` for plastics and metals; ``ValueError`` for an unknown material.
    """
    year, quarter = parse_cure_quarter(cure_quarter)
    group = shelf_life_group(material)
    if group is None:
        return None
    years = group.initial_years + (group.extension_years if extended else 0)
    end = quarter_end(year, quarter)
    return end.replace(year=end.year + years)  # quarter ends are never 29 February


def is_past_storage_limit(cure_quarter: str, material: str, on: date, *,
                          extended: bool = False) -> bool:
    """True when ``on`` is after the lot's :func:`storage_limit` (never for non-elastomers)."""
    limit = storage_limit(cure_quarter, material, extended=extended)
    return limit is not None and on > limit
