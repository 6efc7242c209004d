"""Closed-form replenishment formulas: the normal model (safety factor, safety stock,
reorder points, the (s, Q) fill rate, the periodic-review order-up-to level) and the
economic order quantity. Re-exported by :mod:`inventory.ordering.policy`, the one import
path of the planner and the backtest.

Formulas (REFERENCE.md section 8; Silver, Pyke and Peterson 1998, ch. 5 and 7):

- Normal lead-time demand: mu_L = D L, sigma_L = sigma_D sqrt(L) (with lead-time spread
  sigma_L = sqrt(L sigma_D^2 + D^2 sigma_LT^2)); cycle service P1: s = mu_L + k sigma_L with
  k = Phi^-1(P1); fill rate P2 of an (s, Q) policy with backorders: G(k) = (1 - P2) Q / sigma_L.
- Periodic review order-up-to (R, S), normal: S = D (R + L) + k sigma_D sqrt(R + L).
- EOQ (Harris 1913, Wilson 1934): Q* = sqrt(2 A D / (v r)).

Everything is vectorised over parts (numpy arrays); scalars broadcast.
"""

from __future__ import annotations

from decimal import Decimal

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy import stats

from inventory.forecast.distributions import normal_loss

FloatArray = NDArray[np.float64]


def _f(x: ArrayLike | Decimal) -> FloatArray:
    if isinstance(x, Decimal):
        x = float(x)
    return np.asarray(x, dtype=float)


# -- normal model -------------------------------------------------------------------------


def inverse_normal_loss(g: ArrayLike, *, tol: float = 1e-10) -> FloatArray:
    """The k with G(k) = g (g > 0), by vectorised bisection on k in [-20, 20].

    G is strictly decreasing, so bisection is safe; ``tol`` is the width of the final bracket.
    """
    g = _f(g)
    if np.any(g <= 0):
        raise ValueError("G(k) is positive; g must be > 0")
    lo = np.full(g.shape, -20.0)
    hi = np.full(g.shape, 20.0)
    while np.max(hi - lo) > tol:
        mid = 0.5 * (lo + hi)
        above = normal_loss(mid) > g  # G(mid) too large -> k must be larger
        lo = np.where(above, mid, lo)
        hi = np.where(above, hi, mid)
    return 0.5 * (lo + hi)


def safety_factor(cycle_service: ArrayLike) -> FloatArray:
    """k = Phi^-1(P1) for a cycle service level P1 (probability of no stockout per cycle)."""
    return stats.norm.ppf(_f(cycle_service))


def lead_time_demand_normal(
    demand_per_period: ArrayLike,
    sd_per_period: ArrayLike,
    lead_time: ArrayLike,
    *,
    lead_time_sd: ArrayLike = 0.0,
) -> tuple[FloatArray, FloatArray]:
    """(mu_L, sigma_L) of demand over the lead time; a lead-time spread adds D^2 sigma_LT^2."""
    d, s, lt, slt = (_f(a) for a in (demand_per_period, sd_per_period, lead_time, lead_time_sd))
    return d * lt, np.sqrt(lt * s**2 + d**2 * slt**2)


def safety_stock(k: ArrayLike, sd_lead_time: ArrayLike) -> FloatArray:
    """SS = k sigma_L."""
    return _f(k) * _f(sd_lead_time)


def reorder_point_normal(
    mean_lead_time: ArrayLike, sd_lead_time: ArrayLike, cycle_service: ArrayLike
) -> FloatArray:
    """s = mu_L + Phi^-1(P1) sigma_L (not rounded)."""
    return _f(mean_lead_time) + safety_factor(cycle_service) * _f(sd_lead_time)


def reorder_point_fill_rate_normal(
    mean_lead_time: ArrayLike,
    sd_lead_time: ArrayLike,
    order_quantity: ArrayLike,
    fill_rate: ArrayLike,
) -> FloatArray:
    """s for an (s, Q) policy with backorders hitting fill rate P2: G(k) = (1 - P2) Q / sigma_L."""
    sd = _f(sd_lead_time)
    k = inverse_normal_loss((1.0 - _f(fill_rate)) * _f(order_quantity) / sd)
    return _f(mean_lead_time) + k * sd


def fill_rate_sq_normal(
    mean_lead_time: ArrayLike,
    sd_lead_time: ArrayLike,
    order_quantity: ArrayLike,
    reorder_point: ArrayLike,
) -> FloatArray:
    """P2 = 1 - sigma_L G(k) / Q of an (s, Q) policy with backorders, k = (s - mu_L) / sigma_L."""
    sd = _f(sd_lead_time)
    k = (_f(reorder_point) - _f(mean_lead_time)) / sd
    return 1.0 - sd * normal_loss(k) / _f(order_quantity)


def order_up_to_normal(
    demand_per_period: ArrayLike,
    sd_per_period: ArrayLike,
    review_period: ArrayLike,
    lead_time: ArrayLike,
    cycle_service: ArrayLike,
) -> FloatArray:
    """S = D (R + L) + k sigma_D sqrt(R + L), k = Phi^-1(P1) (not rounded)."""
    cover = _f(review_period) + _f(lead_time)
    return _f(demand_per_period) * cover + safety_factor(cycle_service) * _f(
        sd_per_period
    ) * np.sqrt(cover)


# -- economic order quantity ---------------------------------------------------------------


def eoq(
    annual_demand: ArrayLike | Decimal,
    order_cost: ArrayLike | Decimal,
    unit_cost: ArrayLike | Decimal,
    carrying_rate: ArrayLike | Decimal,
) -> FloatArray:
    """Harris/Wilson economic order quantity Q* = sqrt(2 A D / (v r)) (not rounded).

    ``annual_demand`` D in units/year, ``order_cost`` A per order, ``unit_cost`` v,
    ``carrying_rate`` r per year (0.25 = 25 %). Money may be Decimal; the result is a float.
    """
    d, a, v, r = (_f(x) for x in (annual_demand, order_cost, unit_cost, carrying_rate))
    return np.sqrt(2.0 * a * d / (v * r))


def eoq_annual_cost(
    order_quantity: ArrayLike,
    annual_demand: ArrayLike | Decimal,
    order_cost: ArrayLike | Decimal,
    unit_cost: ArrayLike | Decimal,
    carrying_rate: ArrayLike | Decimal,
) -> FloatArray:
    """Ordering plus carrying cost per year at order size Q: A D / Q + Q v r / 2."""
    q = _f(order_quantity)
    d, a, v, r = (_f(x) for x in (annual_demand, order_cost, unit_cost, carrying_rate))
    return a * d / q + q * v * r / 2.0
