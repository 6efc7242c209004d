"""Invented parts and seats for tests and the benchmark (no real catalog behind them).

- :func:`synthetic_parts`: parts of every kind with sizes around a scale, some fields
  missing, random materials (including unknown codes) and hardness.
- :func:`synthetic_seats`: seats of every kind and gland with geometry near a scale.
- :func:`parts_near`: parts sized around what would fit a given seat, so the fit rules
  see passes, marginals and failures close to their limits.

Everything is drawn from a seeded ``numpy.random.Generator``: the same seed gives the same
catalog, so a benchmark run or a failing test can be repeated.
"""

from __future__ import annotations

import numpy as np

from inventory.bench.fit import kind_applies
from inventory.core.model import Gland, Medium, Motion, PartKind, PartSpec, SeatSpec

KINDS: tuple[PartKind, ...] = (
    PartKind.O_RING, PartKind.X_RING, PartKind.U_CUP, PartKind.DUST_WIPER,
    PartKind.SCRAPER_SEAL, PartKind.FOAM_RING, PartKind.TOP_OUT_BUMPER,
    PartKind.VOLUME_SPACER, PartKind.CRUSH_WASHER, PartKind.GLIDE_RING,
)
#: Materials drawn at random; "XYZ" is an unknown code and ``None`` a missing one.
MATERIALS: tuple[str | None, ...] = ("NBR", "HNBR", "FKM", "AU", "EU", "EPDM", "VMQ",
                                     "PU-FOAM", "CU", "XYZ", None)

GLANDS: dict[PartKind, tuple[Gland, ...]] = {
    PartKind.O_RING: (Gland.PISTON, Gland.ROD, Gland.FACE),
    PartKind.X_RING: (Gland.PISTON, Gland.ROD),
    PartKind.U_CUP: (Gland.ROD, Gland.PISTON),
    PartKind.DUST_WIPER: (Gland.HOUSING,),
    PartKind.SCRAPER_SEAL: (Gland.HOUSING, Gland.ROD),
    PartKind.FOAM_RING: (Gland.HOUSING,),
    PartKind.TOP_OUT_BUMPER: (Gland.SHAFT,),
    PartKind.VOLUME_SPACER: (Gland.CHAMBER,),
    PartKind.CRUSH_WASHER: (Gland.FACE,),
    PartKind.GLIDE_RING: (Gland.PISTON, Gland.ROD),
}


def synthetic_parts(n: int, seed: int = 0, *, scale: float = 30.0) -> list[PartSpec]:
    """``n`` invented parts of every kind with sizes around ``scale`` mm; about 5 % of the
    dimensions are missing, 10 % of the rings carry a standard designation."""
    rng = np.random.default_rng(seed)
    out = []
    for i in range(n):
        kind = KINDS[rng.integers(len(KINDS))]
        idm = scale * float(rng.uniform(0.85, 1.1))
        section = float(rng.uniform(1.5, 6.0))
        maybe = (lambda v: None if rng.random() < 0.05 else round(v, 3))  # noqa: E731
        mat = MATERIALS[rng.integers(len(MATERIALS))]
        hard = None if rng.random() < 0.2 else int(rng.integers(60, 95))
        if kind in (PartKind.O_RING, PartKind.X_RING):
            out.append(PartSpec(f"P{i:06d}", kind, id_mm=maybe(idm), cs_mm=maybe(section),
                                material=mat, hardness_shore_a=hard,
                                standard="AS568-XXX" if rng.random() < 0.1 else None))
        else:
            out.append(PartSpec(f"P{i:06d}", kind, id_mm=maybe(idm),
                                od_mm=maybe(idm + 2 * section + float(rng.uniform(0, 3))),
                                height_mm=maybe(float(rng.uniform(1, 15))),
                                volume_cm3=maybe(float(rng.uniform(2, 25))), material=mat,
                                hardness_shore_a=hard))
    return out


def synthetic_seats(n: int, seed: int = 0, *, scale: float = 30.0) -> list[SeatSpec]:
    """``n`` invented seats cycling through the kinds, glands drawn per kind, geometry
    near ``scale`` mm (fork family ``FAM-T``, seats ``seat-0``, ``seat-1``, ...)."""
    rng = np.random.default_rng(seed)
    out = []
    for j in range(n):
        kind = KINDS[j % len(KINDS)]
        gland = GLANDS[kind][rng.integers(len(GLANDS[kind]))]
        rod = scale * float(rng.uniform(0.3, 1.2))
        depth = float(rng.uniform(1.2, 5.0))
        bore = rod + 2 * depth + float(rng.uniform(0, 4))
        groove = bore - 2 * depth if gland == Gland.PISTON else rod + 2 * depth
        out.append(SeatSpec(
            "FAM-T", f"seat-{j}", "test", kind, gland,
            Motion.DYNAMIC if rng.random() < 0.5 else Motion.STATIC,
            [Medium.OIL, Medium.AIR, Medium.NONE][rng.integers(3)],
            rod_mm=rod, bore_mm=bore, groove_mm=groove,
            groove_width_mm=float(rng.uniform(2, 8)),
            housing_depth_mm=None if rng.random() < 0.2 else float(rng.uniform(3, 12)),
            bore_fit=["H8", "H9", None, "F7"][rng.integers(4)],
            chamber_volume_cm3=float(rng.uniform(80, 200)), piston_mm=32.0,
            travel_mm=float(rng.uniform(80, 160)), set_pressure_bar=float(rng.uniform(3, 8)),
        ))
    return out


def _ring(seat: SeatSpec, u) -> dict:
    rod, bore, groove = seat.rod_mm, seat.bore_mm, seat.groove_mm
    if seat.gland == Gland.PISTON:
        d = {"id_mm": groove * (1 - u(-0.02, 0.07))}
        t = (bore - groove) / 2
    elif seat.gland == Gland.ROD:
        d = {"id_mm": rod * (1 - u(-0.03, 0.07))}
        t = (groove - rod) / 2
    else:
        d = {"id_mm": rod * (1 - u(-0.03, 0.07))}
        t = seat.housing_depth_mm or 6.0
    d["cs_mm"] = t / (1 - u(-0.02, 0.36))
    return d


def _u_cup(seat: SeatSpec, u) -> dict:
    rod, bore, groove = seat.rod_mm, seat.bore_mm, seat.groove_mm
    t = (groove - rod) / 2 if seat.gland == Gland.ROD else (bore - groove) / 2
    section = t / (1 - u(-0.02, 0.25))
    if seat.gland == Gland.ROD:
        d = {"id_mm": rod * (1 - u(-0.01, 0.08))}
        d["od_mm"] = d["id_mm"] + 2 * section
    else:
        d = {"od_mm": bore * (1 + u(-0.01, 0.08))}
        d["id_mm"] = d["od_mm"] - 2 * section
    d["height_mm"] = seat.groove_width_mm / (1 + u(-0.05, 0.4))
    return d


def _wiper(seat: SeatSpec, u) -> dict:
    rod, bore, depth = seat.rod_mm, seat.bore_mm, seat.housing_depth_mm or 6.0
    if seat.gland == Gland.ROD:  # scraper in a seal-head groove
        return dict(id_mm=rod * (1 - u(0, 0.1)), od_mm=seat.groove_mm * (1 + u(-0.008, 0.03)),
                    height_mm=seat.groove_width_mm - u(-0.3, 1.3))
    return dict(id_mm=rod * (1 - u(0, 0.1)), od_mm=bore * (1 + u(-0.003, 0.022)),
                height_mm=depth + u(-1.0, 8.0))


def _glide(seat: SeatSpec, u) -> dict:
    rod, bore, groove = seat.rod_mm, seat.bore_mm, seat.groove_mm
    depth = (bore - groove) / 2 if seat.gland == Gland.PISTON else (groove - rod) / 2
    t = depth - u(-0.06, 0.35)
    if seat.gland == Gland.PISTON:
        od = bore - u(-0.15, 0.6)
        d = dict(od_mm=od, id_mm=od - 2 * t)
    else:
        idm = rod + u(-0.15, 0.6)
        d = dict(id_mm=idm, od_mm=idm + 2 * t)
    d["height_mm"] = seat.groove_width_mm - u(-0.1, 1.3)
    return d


def _near_dims(seat: SeatSpec, kind: PartKind, u, rng: np.random.Generator) -> dict:
    rod, bore = seat.rod_mm, seat.bore_mm
    depth = seat.housing_depth_mm or 6.0
    if kind in (PartKind.O_RING, PartKind.X_RING):
        return _ring(seat, u)
    if kind == PartKind.U_CUP:
        return _u_cup(seat, u)
    if kind in (PartKind.DUST_WIPER, PartKind.SCRAPER_SEAL):
        return _wiper(seat, u)
    if kind == PartKind.FOAM_RING:
        return dict(id_mm=rod * (1 - u(-0.03, 0.1)), od_mm=bore * (1 + u(-0.05, 0.08)),
                    height_mm=depth * u(0.6, 1.9))
    if kind == PartKind.TOP_OUT_BUMPER:
        return dict(id_mm=rod / (1 + u(-0.03, 0.14)), od_mm=bore - 2 * u(-0.2, 1.0),
                    height_mm=depth * u(0.7, 1.1))
    if kind == PartKind.VOLUME_SPACER:
        return dict(od_mm=bore - 2 * u(-0.1, 3.2), height_mm=depth * u(0.2, 1.1),
                    volume_cm3=u(0, 30) if rng.random() < 0.8 else None)
    if kind == PartKind.CRUSH_WASHER:
        return dict(id_mm=rod + u(-0.2, 1.2), od_mm=bore - u(-0.5, 4.0), height_mm=1.0)
    return _glide(seat, u)


def parts_near(seat: SeatSpec, n: int, rng: np.random.Generator) -> list[PartSpec]:
    """``n`` parts of the seat's kind (and its substitutes) sized around what would fit, so
    the rules see passes, marginals and failures near their limits; about 3 % of the
    dimensions are missing."""
    u = rng.uniform
    kinds = [k for k in KINDS if kind_applies(k, seat.part_kind)]
    out = []
    for i in range(n):
        kind = kinds[rng.integers(len(kinds))]
        d = _near_dims(seat, kind, u, rng)
        d = {k: (None if v is not None and rng.random() < 0.03 else v) for k, v in d.items()}
        out.append(PartSpec(
            f"{seat.seat}-{i}", kind, material=MATERIALS[rng.integers(len(MATERIALS))],
            hardness_shore_a=None if rng.random() < 0.2 else int(rng.integers(62, 90)),
            standard="AS568-XXX" if rng.random() < 0.05 else None, **d))
    return out
