"""Levels for one supply option of each part: the order-up-to level, or a reorder point with
an economic order quantity, from the forecast's demand distribution.

The order-up-to levels are :mod:`inventory.ordering.policy`'s (the ONE implementation the
backtest also uses); this module only prepares their inputs for a real supplier:

- **Operational time.** The policy formulas assume the same demand rate in every period. A
  seasonal window (December to a March delivery, then the spring peak until the next one)
  is made stationary by measuring time in expected demand: with ``m`` the mean rate over
  the whole cover, the lead time becomes ``E[D(now, arrival)] / m`` periods and the review
  period ``E[D(arrival, next delivery)] / m``. For Poisson and negative binomial demand
  (compound Poisson with a fixed variance-to-mean ratio) this time change is exact: the
  demand of a window with a varying rate has the distribution of a window of the same
  expected demand at a constant rate.
- **Lead-time spread.** With a lead time of spread sigma_LT (months), the variance of demand
  over the cover gains ``m^2 sigma_LT^2`` (Silver, Pyke and Peterson ch. 7, REFERENCE.md 8:
  sigma_L^2 = L sigma_D^2 + D^2 sigma_LT^2). It is folded into the per-period distribution
  (a larger variance-to-mean ratio, or standard deviation for the normal kind) so that the
  variance over the whole cover is right.
- **Reorder point for a fill rate.** For an (s, Q) policy with backorders, the expected units
  short per order cycle are E[(D - s)^+] - E[(D - s - Q)^+] over the protection interval,
  and the fill rate is one minus that over Q (Silver, Pyke and Peterson ch. 7;
  REFERENCE.md 8 gives the normal form 1 - sigma_L G(k) / Q, the second term being
  negligible there). :func:`reorder_point_for_fill` finds the smallest whole s by bisection,
  for any of the distribution kinds, with the one level search of
  :func:`inventory.ordering.policy.smallest_level` (which raises rather than miss a target).
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

from inventory.forecast.distributions import DemandDistribution
from inventory.ordering import policy

FloatArray = NDArray[np.float64]
IntArray = NDArray[np.int64]


def cover_distribution(
    base: DemandDistribution,
    rate: ArrayLike,
    cover: ArrayLike,
    *,
    lead_time_sd: ArrayLike = 0.0,
) -> DemandDistribution:
    """Per-period demand at the mean ``rate`` over a cover of ``cover`` periods, with the
    dispersion of ``base`` (its variance-to-mean ratio, or its standard deviation for the
    normal kind) plus the lead-time spread ``lead_time_sd`` (periods).

    The extra variance ``rate^2 sd^2`` is spread over the cover: the per-period ratio rises
    by ``rate sd^2 / cover`` (negative binomial; Poisson becomes negative binomial), the
    per-period variance by ``rate^2 sd^2 / cover`` (normal).
    """
    m = np.maximum(np.asarray(rate, dtype=float), 0.0)
    c = np.maximum(np.broadcast_to(np.asarray(cover, dtype=float), m.shape), 1e-9)
    sd_lt = np.broadcast_to(np.asarray(lead_time_sd, dtype=float), m.shape)
    if base.kind == "normal":
        assert base.sd is not None
        sd = np.broadcast_to(base.sd, m.shape)
        return DemandDistribution("normal", m, sd=np.sqrt(sd**2 + m**2 * sd_lt**2 / c))
    vmr = np.ones(m.shape) if base.kind == "poisson" else np.maximum(
        np.broadcast_to(np.asarray(base.vmr, dtype=float), m.shape), 1.0)
    return DemandDistribution("nbinom", m, vmr=vmr + m * sd_lt**2 / c)


def operational_times(
    demand_lead: ArrayLike, demand_review: ArrayLike, cover: ArrayLike
) -> tuple[FloatArray, FloatArray, FloatArray]:
    """(rate, lead, review) in operational time from the expected demand before the delivery
    (``demand_lead``), between it and the next one (``demand_review``) and the calendar
    length of the whole cover (periods). The rate is the mean over the cover; parts with no
    expected demand keep the calendar split."""
    el = np.asarray(demand_lead, dtype=float)
    er = np.asarray(demand_review, dtype=float)
    c = np.maximum(np.asarray(cover, dtype=float), 1e-9)
    total = el + er
    rate = total / c
    has = total > 0
    safe = np.where(has, rate, 1.0)
    lead = np.where(has, el / safe, c / 2.0)
    review = np.where(has, er / safe, c / 2.0)
    return rate, lead, review


def cycle_service_levels(
    dist: DemandDistribution, cycle_service: ArrayLike, periods: ArrayLike
) -> FloatArray:
    """The demand quantile over ``periods``: smallest whole level with P(D <= level) >= P1
    for the discrete kinds, the exact normal quantile (not rounded) for the normal kind."""
    n = len(dist)
    q = np.broadcast_to(np.asarray(cycle_service, dtype=float), (n,))
    over = dist.over(np.broadcast_to(np.asarray(periods, dtype=float), (n,)))
    out = over.quantile(q)
    return np.where(dist.mean > 0, out, 0.0)


def reorder_point_for_fill(
    dist: DemandDistribution,
    order_qty: ArrayLike,
    fill_target: ArrayLike,
    *,
    protection: ArrayLike,
    max_doublings: int = 40,
    tol: float = 1e-7,
) -> FloatArray:
    """Smallest reorder point s with fill rate ``1 - (E[(D-s)^+] - E[(D-s-Q)^+]) / Q`` at
    least the target, D the demand over the ``protection`` interval (lead time, plus the
    review period under periodic review). Whole units for the discrete kinds; for the normal
    kind the continuous solution (to ``tol`` units), for the caller to round. Parts with no
    demand get s = -1 (never reorder).
    """
    n = len(dist)
    q = np.maximum(np.broadcast_to(np.asarray(order_qty, dtype=float), (n,)), 1e-9)
    target = np.broadcast_to(np.asarray(fill_target, dtype=float), (n,))
    over = dist.over(np.broadcast_to(np.asarray(protection, dtype=float), (n,)))
    whole = over.kind != "normal"

    def meets(s: FloatArray, idx: IntArray) -> NDArray[np.bool_]:
        d = over.take(idx)
        short = d.expected_shortage(s) - d.expected_shortage(s + q[idx])
        return 1.0 - np.maximum(short, 0.0) / q[idx] >= target[idx] - 1e-12

    active = np.flatnonzero(over.mean > 0)
    hi = np.ceil(over.mean + 4.0 * np.sqrt(over.variance()) + 1.0)
    lo = -np.ceil(q) - 1.0  # a level of -Q - 1 fills nothing
    out = policy.smallest_level(meets, lo, hi, active,
                                policy.LevelSearch(whole=whole, tol=tol,
                                                   max_doublings=max_doublings,
                                                   what="reorder_point_for_fill"))
    out[over.mean <= 0] = -1.0
    return out


def filled_units(
    dist: DemandDistribution, level: ArrayLike, *, lead_time: ArrayLike, review_period: ArrayLike
) -> FloatArray:
    """Expected units served from the shelf in one review window after a delivery, with the
    inventory position raised to ``level`` now: E[D_R] times the exact cycle fill rate of
    :func:`inventory.ordering.policy.cycle_fill_rate`."""
    rp = np.asarray(review_period, dtype=float)
    fill = policy.cycle_fill_rate(dist, level, lead_time=lead_time, review_period=rp)
    return np.asarray(fill * dist.mean * rp, dtype=float)


def economic_order_quantity(
    annual_demand: ArrayLike, order_cost: ArrayLike, unit_cost: ArrayLike,
    carrying_rate: float,
) -> FloatArray:
    """Harris/Wilson EOQ per part (:func:`inventory.ordering.policy.eoq`); 0 where there is no
    demand or no ordering cost."""
    d = np.asarray(annual_demand, dtype=float)
    a = np.broadcast_to(np.asarray(order_cost, dtype=float), d.shape)
    v = np.maximum(np.broadcast_to(np.asarray(unit_cost, dtype=float), d.shape), 1e-12)
    ok = (d > 0) & (a > 0)
    q = policy.eoq(np.where(ok, d, 0.0), np.where(ok, a, 0.0), v, carrying_rate)
    return np.where(ok, q, 0.0)
