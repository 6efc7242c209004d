"""Replenishment policy arithmetic checked against outside sources.

- ../shared/REFERENCE.md section 8: the G(k) table and the worked examples computed there
  from Silver, Pyke and Peterson (1998): EOQ 84.9 kits, reorder point 23.5, order-up-to
  48.1, the fill-rate variant (k = 0.399, s = 17.1), and the Poisson and negative binomial
  reorder points (s = 3/4/5 and 4/5/7).
- scipy.stats / scipy.integrate for the loss function, quantiles and expected shortages.
- stockpyl (Snyder and Shen, "Fundamentals of Supply Chain Theory"): its EOQ, its
  standard normal, Poisson and negative binomial loss functions and its newsvendor
  (base-stock) levels, read from its installed source (stockpyl.eoq, stockpyl.loss_functions,
  stockpyl.newsvendor).
- hypothesis for properties of the level search.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import integrate, stats

from inventory.forecast import distributions as dd
from inventory.ordering import policy

stockpyl_eoq = pytest.importorskip("stockpyl.eoq")
stockpyl_loss = pytest.importorskip("stockpyl.loss_functions")
stockpyl_nv = pytest.importorskip("stockpyl.newsvendor")


# -- standard normal loss ------------------------------------------------------------------


@pytest.mark.parametrize(
    ("k", "phi", "g"),
    # REFERENCE.md section 8 G(k) table (C, scipy.stats.norm)
    [(0.00, 0.5000, 0.39894), (0.50, 0.6915, 0.19780), (1.00, 0.8413, 0.08332),
     (1.28, 0.8997, 0.04750), (1.645, 0.9500, 0.02089), (2.00, 0.9772, 0.00849),
     (2.33, 0.9901, 0.00335), (3.00, 0.9987, 0.00038)],
)
def test_normal_loss_table(k: float, phi: float, g: float) -> None:
    assert policy.normal_loss(k) == pytest.approx(g, abs=5e-6)
    assert stats.norm.cdf(k) == pytest.approx(phi, abs=5e-5)
    # definition E[(Z - k)^+] by numerical integration (scipy.integrate.quad)
    direct, _ = integrate.quad(lambda z: (z - k) * stats.norm.pdf(z), k, np.inf)
    assert policy.normal_loss(k) == pytest.approx(direct, rel=1e-7)
    # stockpyl.loss_functions.standard_normal_loss
    assert policy.normal_loss(k) == pytest.approx(stockpyl_loss.standard_normal_loss(k)[0],
                                                  rel=1e-12)


def test_inverse_normal_loss_round_trip() -> None:
    ks = np.linspace(-2.5, 3.5, 25)
    np.testing.assert_allclose(policy.inverse_normal_loss(policy.normal_loss(ks)), ks, atol=1e-7)


def test_safety_factors_for_common_cycle_service() -> None:
    # REFERENCE.md 8: k for P1 90 / 95 / 98 / 99 % = 1.2816 / 1.6449 / 2.0537 / 2.3263
    np.testing.assert_allclose(policy.safety_factor([0.90, 0.95, 0.98, 0.99]),
                               [1.2816, 1.6449, 2.0537, 2.3263], atol=5e-5)


# -- Silver, Pyke and Peterson worked examples (REFERENCE.md section 8) -----------------------


def test_eoq_example() -> None:
    # D = 240 / yr, A = 15, v = 4.00, r = 25 % -> Q* = 84.9 kits, cost 84.85 / yr;
    # Q = 60 and Q = 120 both cost 90.0 (flat cost curve)
    from decimal import Decimal

    q = policy.eoq(240, Decimal("15"), Decimal("4.00"), Decimal("0.25"))
    assert round(float(q), 1) == 84.9
    assert policy.eoq_annual_cost(q, 240, 15, 4.0, 0.25) == pytest.approx(84.85, abs=5e-3)
    assert policy.eoq_annual_cost(60, 240, 15, 4.0, 0.25) == pytest.approx(90.0)
    assert policy.eoq_annual_cost(120, 240, 15, 4.0, 0.25) == pytest.approx(90.0)
    # stockpyl.eoq.economic_order_quantity(fixed_cost, holding_cost = v r, demand_rate)
    q_ref, cost_ref = stockpyl_eoq.economic_order_quantity(15, 4.0 * 0.25, 240)
    assert float(q) == pytest.approx(q_ref, rel=1e-12)
    assert policy.eoq_annual_cost(q, 240, 15, 4.0, 0.25) == pytest.approx(cost_ref, rel=1e-12)
    # stockpyl's textbook example 3.1: K = 8, h = 0.225, lambda = 1300 -> 304.05
    assert float(policy.eoq(1300, 8, 0.225, 1.0)) == pytest.approx(304.0467800264368)


def test_reorder_point_example() -> None:
    # D = 5 / week, sigma_D = 3, L = 3 weeks -> mu_L = 15, sigma_L = 5.196; P1 95 % ->
    # SS = 8.55, s = 23.5; with Q = 60 that s gives P2 ~ 99.8 %
    mu_l, sd_l = policy.lead_time_demand_normal(5, 3, 3)
    assert float(mu_l) == 15
    assert float(sd_l) == pytest.approx(5.196, abs=5e-4)
    assert float(policy.safety_stock(policy.safety_factor(0.95), sd_l)) == pytest.approx(
        8.55, abs=5e-3)
    s = policy.reorder_point_normal(mu_l, sd_l, 0.95)
    assert round(float(s), 1) == 23.5
    assert float(policy.fill_rate_sq_normal(mu_l, sd_l, 60, s)) == pytest.approx(0.998, abs=5e-4)


def test_fill_rate_reorder_point_example() -> None:
    # target P2 98 % with Q = 60: G(k) = 0.02 * 60 / 5.196 = 0.231 -> k = 0.399,
    # SS = 2.07, s = 17.1
    mu_l, sd_l = policy.lead_time_demand_normal(5, 3, 3)
    s = policy.reorder_point_fill_rate_normal(mu_l, sd_l, 60, 0.98)
    k = (float(s) - 15) / float(sd_l)
    assert round(k, 3) == 0.399
    assert round(float(s) - 15, 2) == 2.07
    assert round(float(s), 1) == 17.1


def test_order_up_to_example() -> None:
    # R = 4 weeks, same data, P1 95 % -> S = 35 + 1.645 * 7.94 = 48.1
    s = policy.order_up_to_normal(5, 3, 4, 3, 0.95)
    assert round(float(s), 1) == 48.1


def test_order_up_to_matches_stockpyl_base_stock() -> None:
    # stockpyl.newsvendor.newsvendor_normal with lead time L: S = mu (L+1) + z sigma sqrt(L+1)
    # at the critical ratio p / (p + h); ours with review period 1 and the same service
    h, p = 0.18, 0.70
    for lead in (0, 1, 3):
        s_ref, _ = stockpyl_nv.newsvendor_normal(h, p, 50, 8, lead_time=lead)
        s = policy.order_up_to_normal(50, 8, 1, lead, p / (p + h))
        assert float(s) == pytest.approx(s_ref, rel=1e-12)
    # Poisson: smallest S with F(S) >= p / (p + h)
    s_ref, _ = stockpyl_nv.newsvendor_poisson(h, p, 6.0)
    s = policy.reorder_point_discrete(dd.poisson(6.0), p / (p + h))
    assert float(s[0]) == s_ref


# -- slow movers: Poisson and negative binomial (REFERENCE.md section 8) -----------------------


@pytest.mark.parametrize(("p1", "expected", "cdf"), [(0.90, 3, 0.934), (0.95, 4, 0.981),
                                                      (0.99, 5, 0.996)])
def test_poisson_reorder_points(p1: float, expected: int, cdf: float) -> None:
    # lambda = 0.5 / week, L = 3 -> mean 1.5: s = 3 / 4 / 5 (P(X <= s) 0.934 / 0.981 / 0.996)
    lt = dd.poisson(0.5).over(3)
    s = policy.reorder_point_discrete(lt, p1)
    assert int(s[0]) == expected
    assert float(lt.cdf(s)[0]) == pytest.approx(cdf, abs=5e-4)
    assert float(lt.cdf(s)[0]) == pytest.approx(stats.poisson.cdf(expected, 1.5))


@pytest.mark.parametrize(("p1", "expected"), [(0.90, 4), (0.95, 5), (0.99, 7)])
def test_negative_binomial_reorder_points(p1: float, expected: int) -> None:
    # mu = 1.5, sigma^2 = 3.0 -> r = 1.5, p = 0.5 (scipy nbinom(n=r, p=p)): s = 4 / 5 / 7,
    # P(X <= 5) = 0.965
    lt = dd.negative_binomial_from_moments(1.5, 3.0)
    s = policy.reorder_point_discrete(lt, p1)
    assert int(s[0]) == expected
    assert int(stats.nbinom.ppf(p1, 1.5, 0.5)) == expected
    if expected == 5:
        assert float(lt.cdf(s)[0]) == pytest.approx(0.965, abs=5e-4)


# -- distributions against scipy and stockpyl --------------------------------------------------


def _brute_shortage(pmf: np.ndarray, s: int) -> float:
    x = np.arange(pmf.size)
    return float((np.maximum(x - s, 0) * pmf).sum())


@pytest.mark.parametrize("mean", [0.05, 0.7, 3.0, 25.0])
@pytest.mark.parametrize("vmr", [1.0, 1.8, 6.0])
def test_quantiles_cdf_and_shortage_match_scipy(mean: float, vmr: float) -> None:
    d = dd.negative_binomial(mean, vmr)
    x = np.arange(0, 4000)
    if vmr > 1:
        ref = stats.nbinom(mean / (vmr - 1), 1 / vmr)
    else:
        ref = stats.poisson(mean)
    pmf = ref.pmf(x)
    for s in (0, 1, 2, 5, 10, 40):
        assert float(d.cdf(s)[0]) == pytest.approx(ref.cdf(s), rel=1e-9, abs=1e-14)
        assert float(d.expected_shortage(s)[0]) == pytest.approx(_brute_shortage(pmf, s),
                                                                 rel=1e-8, abs=1e-12)
    for q in (0.5, 0.9, 0.95, 0.99, 0.999):
        assert float(d.quantile(q)[0]) == ref.ppf(q)


def test_shortage_matches_stockpyl_loss_functions() -> None:
    # stockpyl.loss_functions.poisson_loss(x, mean) and negative_binomial_loss(x, mean, sd)
    for s in (0, 3, 18, 25):
        assert float(dd.poisson(15.0).expected_shortage(s)[0]) == pytest.approx(
            stockpyl_loss.poisson_loss(s, 15)[0], rel=1e-9)
        assert float(dd.negative_binomial_from_moments(23.0, 64.0).expected_shortage(s)[0]) == (
            pytest.approx(stockpyl_loss.negative_binomial_loss(s, mean=23, sd=8)[0], rel=1e-9))
    # stockpyl's doc examples: poisson_loss(18, 15) = 0.5176..., NB(23, sd 8) at 14 = 9.326...
    assert float(dd.poisson(15.0).expected_shortage(18)[0]) == pytest.approx(0.5176095282584724)
    assert float(dd.negative_binomial_from_moments(23, 64).expected_shortage(14)[0]) == (
        pytest.approx(9.326459980156931))


def test_normal_distribution_shortage_is_sigma_g() -> None:
    d = dd.normal([10.0, 3.0], [2.0, 0.5])
    s = np.array([12.0, 2.0])
    np.testing.assert_allclose(d.expected_shortage(s),
                               [2.0 * policy.normal_loss(1.0), 0.5 * policy.normal_loss(-2.0)])


# -- the exact periodic-review fill rate ---------------------------------------------------------


def _brute_cycle_fill(lam: float, vmr: float, s: int, lead: int, review: int) -> float:
    """E[(D_{L+R} - S)^+] - E[(D_L - S)^+] over E[D_R], summed over scipy pmfs."""
    x = np.arange(0, 3000)

    def pmf(periods: int) -> np.ndarray:
        m = lam * periods
        if periods == 0:
            return (x == 0).astype(float)
        return stats.poisson.pmf(x, m) if vmr == 1 else stats.nbinom.pmf(x, m / (vmr - 1),
                                                                           1 / vmr)

    short = _brute_shortage(pmf(lead + review), s) - _brute_shortage(pmf(lead), s)
    return 1.0 - short / (lam * review)


@pytest.mark.parametrize(("lam", "vmr"), [(0.3, 1.0), (2.0, 1.0), (0.8, 3.0), (6.0, 2.0)])
@pytest.mark.parametrize(("lead", "review"), [(1, 1), (0, 1), (2, 3)])
def test_cycle_fill_rate_matches_brute_force(lam: float, vmr: float, lead: int,
                                             review: int) -> None:
    d = dd.negative_binomial(lam, vmr)
    for s in (0, 1, 3, 8, 20):
        got = float(policy.cycle_fill_rate(d, s, lead_time=lead, review_period=review)[0])
        assert got == pytest.approx(_brute_cycle_fill(lam, vmr, s, lead, review), abs=1e-9)


def test_cycle_fill_rate_agrees_with_a_long_simulation() -> None:
    # a long run of the backtest simulator (periodic review, backorders) at the level
    from inventory.ordering.backtest import simulate_order_up_to

    rng = np.random.default_rng(1)
    lam, vmr, s = 1.2, 2.5, 5
    demand = stats.nbinom.rvs(lam / (vmr - 1), 1 / vmr, size=(400, 250), random_state=rng)
    sim = simulate_order_up_to(np.full(400, s), demand, lead_time=1, review_period=1)
    realised = sim.served.sum() / sim.demand.sum()
    expected = float(policy.cycle_fill_rate(dd.negative_binomial(lam, vmr), s)[0])
    assert realised == pytest.approx(expected, abs=0.004)


def test_order_up_to_levels_are_the_smallest_meeting_the_target() -> None:
    rng = np.random.default_rng(3)
    mean = rng.gamma(0.8, 1.5, 300)
    mean[:5] = 0.0
    d = dd.negative_binomial(mean, rng.uniform(1.0, 6.0, 300))
    targets = rng.uniform(0.5, 0.995, 300)
    levels = policy.order_up_to_levels(d, targets)
    fill = policy.cycle_fill_rate(d, levels)
    below = policy.cycle_fill_rate(d, np.maximum(levels - 1, 0))
    assert np.all(levels[:5] == 0)
    live = mean > 0
    assert np.all(fill[live] >= targets[live] - 1e-12)
    assert np.all(below[live & (levels > 0)] < targets[live & (levels > 0)])


@settings(max_examples=40, deadline=None)
@given(mean=st.floats(0.01, 40.0), vmr=st.floats(1.0, 12.0),
       t1=st.floats(0.3, 0.99), t2=st.floats(0.3, 0.99), lead=st.integers(0, 3))
def test_levels_grow_with_the_target(mean: float, vmr: float, t1: float, t2: float,
                                     lead: int) -> None:
    d = dd.negative_binomial(mean, vmr)
    lo, hi = sorted((t1, t2))
    s_lo = policy.order_up_to_levels(d, lo, lead_time=lead)
    s_hi = policy.order_up_to_levels(d, hi, lead_time=lead)
    assert s_lo[0] <= s_hi[0]


@pytest.mark.parametrize("method", ["uniform", "marginal"])
def test_pooled_levels_meet_the_pooled_target(method: str) -> None:
    rng = np.random.default_rng(8)
    mean = rng.gamma(0.7, 1.2, 400)
    d = dd.negative_binomial(mean, rng.uniform(1.0, 5.0, 400))
    groups = np.where(np.arange(400) < 150, "A", "C")
    levels = policy.pooled_order_up_to_levels(d, [0.97, 0.90], groups=groups,
                                              search=policy.PooledSearch(method=method))
    for g, target in (("A", 0.97), ("C", 0.90)):
        rows = groups == g
        got = policy.expected_fill(d.take(rows), levels[rows])
        assert got >= target - 1e-9
        assert got < target + 0.01  # not wildly above: the search is tight
    per_part = policy.order_up_to_levels(d, np.where(groups == "A", 0.97, 0.90))
    # per-part rounding overshoots the pooled target, so meeting it pooled needs less stock
    assert levels.sum() <= per_part.sum()


def test_one_level_search_finds_the_smallest_level_or_raises() -> None:
    """Issue 10 item 8: one level search for the planner and the backtest. It finds the
    same level as a plain linear scan over whole units (the reference), and a target no
    level reaches raises instead of returning a level that silently misses it."""
    from inventory.forecast.distributions import negative_binomial
    from inventory.ordering.levels import reorder_point_for_fill
    from inventory.ordering.policy import (
        LevelSearch,
        cycle_fill_rate,
        order_up_to_levels,
        smallest_level,
    )

    dist = negative_binomial([0.3, 2.0, 7.5], 2.5)
    got = order_up_to_levels(dist, 0.95, lead_time=1, review_period=1)
    for i in range(3):
        d = dist.take(np.array([i]))
        s = 0
        while cycle_fill_rate(d, s, lead_time=1, review_period=1)[0] < 0.95 - 1e-12:
            s += 1
        assert got[i] == s
    # the reorder point goes through the same search
    rp = reorder_point_for_fill(dist, [5, 5, 5], 0.9, protection=2.0)
    assert np.all(rp >= -6)
    with pytest.raises(RuntimeError, match="no level reaches the target"):
        smallest_level(lambda s, idx: s >= 1e30, np.full(2, -1.0), np.ones(2),
                       np.arange(2), LevelSearch(max_doublings=5, what="test"))


@pytest.mark.parametrize("method", ["uniform", "marginal"])
def test_pooled_levels_batch_equals_one_target_at_a_time(method: str) -> None:
    """The fill calibration's grid shares one table of expected fills: the levels are the
    same as :func:`policy.pooled_order_up_to_levels` (checked against the exact fill rate
    above) called once per target."""
    rng = np.random.default_rng(21)
    d = dd.negative_binomial(rng.gamma(0.7, 1.5, 300), rng.uniform(1.0, 4.0, 300))
    rates = (0.8, 0.9, 0.95, 0.98, 0.995)
    search = policy.PooledSearch(method=method)  # type: ignore[arg-type]
    batch = policy.pooled_levels_batch(d, rates, lead_time=1, review_period=1, search=search)
    for f, got in zip(rates, batch, strict=True):
        one = policy.pooled_order_up_to_levels(d, f, lead_time=1, review_period=1, search=search)
        assert np.array_equal(got, one)
        assert policy.expected_fill(d, got) >= f - 1e-9
