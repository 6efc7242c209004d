"""Plain geometry and gas-law formulas behind the fit rules (scalars or numpy arrays).

Sources: REFERENCE.md 2 (O-ring gland equations, constant-volume cross-section under
stretch) and REFERENCE.md 9 (polytropic law for the air spring). Every function works
element-wise on numpy arrays as well as on floats, so the scalar fit and the compatibility
matrix share one implementation.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from inventory.bench.fit_limits import P_ATM_BAR  # standard atmosphere, bar (ISO 2533)

ArrayLike = float | np.ndarray


def stretched_cross_section(d1: ArrayLike, d2: ArrayLike, d_seat: ArrayLike) -> ArrayLike:
    """Cross-section d2' of a round ring of inside diameter d1 stretched onto d_seat.

    Constant rubber volume and a round section (REFERENCE.md 2):
    ``d2'^2 (d_seat + d2') = d2^2 (d1 + d2)``, solved by Newton's method from the
    approximation ``d2 / sqrt(1 + eps)``, ``eps = (d_seat - d1) / (d1 + d2)``. Where the
    ring is not stretched (``d_seat <= d1``) d2 is returned unchanged: the growth of a
    compressed ring is ignored, the safe side for a minimum-squeeze check.
    Only +, *, / and sqrt are used, so an array and a scalar give identical bits.
    """
    d1a = np.asarray(d1, dtype=float)
    d2a = np.asarray(d2, dtype=float)
    ds = np.asarray(d_seat, dtype=float)
    stretched = ds > d1a
    seat = np.where(stretched, ds, d1a)
    k = d2a * d2a * (d1a + d2a)
    x = d2a / np.sqrt(1.0 + (seat - d1a) / (d1a + d2a))
    for _ in range(4):
        x = x - (x * x * (seat + x) - k) / (2.0 * x * seat + 3.0 * x * x)
    out = np.where(stretched, x, d2a)
    return float(out) if out.ndim == 0 else out


#: Stretch (%) above which the handbook curve is held at its peak, so the reduction never
#: falls as stretch grows (the quadratic turns over near 64 %; far outside any fit limit).
HANDBOOK_STRETCH_CAP_PCT = 64.0


def handbook_cs_reduction_pct(stretch_pct: ArrayLike) -> ArrayLike:
    """Cross-section reduction (% of d2) of a ring stretched by ``stretch_pct`` (% of d1),
    from the empirical curves of seal handbooks quoted in REFERENCE.md 2 (recalled from
    memory): ``Y = 0.01 + 1.06 X - 0.10 X^2`` for ``X <= 3``, ``Y = 0.56 + 0.59 X - 0.0046 X^2``
    above. No stretch (``X <= 0``) gives no reduction; above
    :data:`HANDBOOK_STRETCH_CAP_PCT` the curve is held at its peak."""
    x = np.minimum(np.asarray(stretch_pct, dtype=float), HANDBOOK_STRETCH_CAP_PCT)
    y = np.where(x <= 3.0, 0.01 + 1.06 * x - 0.10 * x * x, 0.56 + 0.59 * x - 0.0046 * x * x)
    out = np.where(x > 0.0, y, 0.0)
    return float(out) if out.ndim == 0 else out


def cross_section_bounds(d1: ArrayLike, d2: ArrayLike,
                         d_seat: ArrayLike) -> tuple[ArrayLike, ArrayLike]:
    """(smallest, largest) plausible cross-section of a ring of d1 x d2 stretched onto d_seat.

    REFERENCE.md 2 (corrected): the handbook curve gives roughly twice the constant-volume
    reduction at low stretch, so neither is the safe side for every check. The smallest
    section uses the larger of the two reductions (for the minimum squeeze), the largest
    the smaller one (for the maximum squeeze and the fill).
    """
    d1a = np.asarray(d1, dtype=float)
    d2a = np.asarray(d2, dtype=float)
    cv = np.asarray(stretched_cross_section(d1a, d2a, d_seat), dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        stretch = (np.asarray(d_seat, dtype=float) - d1a) / d1a * 100.0
    hb = d2a * (1.0 - np.asarray(handbook_cs_reduction_pct(stretch)) / 100.0)
    small, large = np.minimum(cv, hb), np.maximum(cv, hb)
    if small.ndim == 0:
        return float(small), float(large)
    return small, large


@dataclass(frozen=True, slots=True)
class OringGland:
    """Installed state of a round ring in a radial gland (percentages, mm)."""

    stretch_pct: float
    cs_stretched_mm: float
    depth_mm: float
    squeeze_pct: float  # with the stretched cross-section
    squeeze_unstretched_pct: float
    fill_pct: float  # ring section / groove section, stretched d2, no swell


def oring_gland(d1: float, d2: float, *, d_seat: float, depth_mm: float,
                width_mm: float) -> OringGland:
    """Stretch, squeeze and fill of a ring of d1 x d2 in a gland.

    ``d_seat`` is the diameter the ring's inside sits on: the groove root d3 of a piston
    (male) gland, the rod of a rod (female) gland. ``depth_mm`` is the radial depth t:
    ``(bore - d3) / 2`` or ``(d6 - rod) / 2``. Equations of REFERENCE.md 2.
    """
    stretch = (d_seat - d1) / d1 * 100.0
    d2s = float(stretched_cross_section(d1, d2, d_seat))
    return OringGland(
        stretch_pct=stretch,
        cs_stretched_mm=d2s,
        depth_mm=depth_mm,
        squeeze_pct=(d2s - depth_mm) / d2s * 100.0,
        squeeze_unstretched_pct=(d2 - depth_mm) / d2 * 100.0,
        fill_pct=math.pi * d2s * d2s / 4.0 / (width_mm * depth_mm) * 100.0,
    )


def polytropic_pressure(p1_abs: ArrayLike, v1: ArrayLike, v2: ArrayLike, n: float) -> ArrayLike:
    """Absolute pressure after a polytropic change ``p1 V1^n = p2 V2^n``.

    n = 1.0 is isothermal (Boyle), n = 1.4 adiabatic for air (REFERENCE.md 9).
    """
    out = np.asarray(p1_abs, dtype=float) * (np.asarray(v1, dtype=float) / v2) ** n
    return float(out) if out.ndim == 0 else out


@dataclass(frozen=True, slots=True)
class SpacerEffect:
    """The air spring at full compression with a spacer fitted (volumes cm3, bar gauge)."""

    v1_cm3: float  # chamber volume at full extension, spacer fitted
    v2_cm3: float  # at the end of travel
    ratio: float  # v1 / v2
    p2_gauge_bar: float


def spacer_end_pressure(chamber_volume_cm3: ArrayLike, spacer_cm3: ArrayLike, *,
                        piston_mm: float, travel_mm: float, set_pressure_bar: float,
                        n: float = 1.0, p_atm_bar: float = P_ATM_BAR) -> SpacerEffect:
    """End-of-travel pressure of a positive air chamber with a volume spacer.

    ``V1 = V0 - V_spacer``, ``V2 = V1 - A x`` with A the air-piston area, then the
    polytropic law on absolute pressures (REFERENCE.md 9). Negative chamber, seal friction
    and oil volume are ignored. A non-positive V2 gives an infinite pressure.
    """
    area_cm2 = math.pi * (piston_mm / 10.0) ** 2 / 4.0
    v1 = np.asarray(chamber_volume_cm3, dtype=float) - spacer_cm3
    v2 = v1 - area_cm2 * travel_mm / 10.0
    p1 = set_pressure_bar + p_atm_bar
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.where(v2 > 0, v1 / np.where(v2 > 0, v2, 1.0), np.inf)
        p2 = np.where(v2 > 0, polytropic_pressure(p1, ratio, 1.0, n), np.inf) - p_atm_bar
    if np.ndim(v1) == 0:
        return SpacerEffect(float(v1), float(v2), float(ratio), float(p2))
    return SpacerEffect(v1, v2, ratio, p2)  # type: ignore[arg-type]
