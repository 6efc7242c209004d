"""The order planner's pure core, checked through its own code path (plan_orders) against
outside sources:

- ../shared/REFERENCE.md section 8, the worked examples computed there from Silver, Pyke and
  Peterson (1998): EOQ 84.9 kits, reorder point 23.5, order-up-to 48.1, the fill-rate
  reorder point 17.1, and the negative binomial and Poisson quantiles;
- stockpyl (Snyder and Shen, "Fundamentals of Supply Chain Theory"; read from its installed
  source): ``stockpyl.eoq.economic_order_quantity(fixed_cost, holding_cost, demand_rate)``,
  ``stockpyl.newsvendor.newsvendor_poisson(holding_cost, stockout_cost, demand_mean)`` (the
  smallest base stock with F(S) >= p / (p + h)) and
  ``stockpyl.loss_functions.poisson_loss(x, mean)`` (first-order loss E[(X - x)^+], first of
  the returned pair);
- scipy.stats for the normal loss function and the Poisson and negative binomial quantiles;
- ISO 2230 storage periods (REFERENCE.md 5) for the shelf-life cap;
- hypothesis for the rounding, shelf-life and budget properties.

Requests are built inline: one or a few parts, invented suppliers, a forecast given as
monthly means and a per-month distribution.
"""

from __future__ import annotations

import math
from datetime import date, timedelta
from decimal import Decimal

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from scipy import stats

from inventory.core.model import KitSpec, ServiceLevel
from inventory.forecast import distributions as dd
from inventory.ordering.calendar import DemandCalendar, positions
from inventory.ordering.model import (
    DemandForecast,
    PartStock,
    PlanOptions,
    PlanRequest,
    SupplierTerms,
    SupplyOption,
)
from inventory.ordering.plan import PlanningError, plan_orders
from inventory.ordering.rules import greedy_budget, round_order

stockpyl_eoq = pytest.importorskip("stockpyl.eoq")
stockpyl_nv = pytest.importorskip("stockpyl.newsvendor")
stockpyl_loss = pytest.importorskip("stockpyl.loss_functions")

AS_OF = date(2027, 2, 1)
MONTH0 = date(2027, 2, 1)
H = 140


def days_in_months(month0: date, n: int) -> np.ndarray:
    m = np.datetime64(month0.strftime("%Y-%m"), "M") + np.arange(n + 1)
    d = m.astype("datetime64[D]")
    return np.diff(d).astype(float)


def daily_rate_means(rate_per_day: float, n: int = H) -> np.ndarray:
    """Monthly means of a constant daily rate (so any window of d days expects rate * d)."""
    return rate_per_day * days_in_months(MONTH0, n)


def one_part(*, monthly, dist, lead=21.0, cycle=28.0, sd=0.0, cost="4.00", pack=1, moq=1,
             on_hand=0, on_order=0, material=None, min_value="0", code="KIT-A",
             kind="kit"):
    sup = SupplierTerms("SUP", "Supplier", lead, sd, Decimal(min_value), cycle)
    f = DemandForecast((code,), MONTH0, np.atleast_2d(monthly), dist, np.array([True]))
    return PlanRequest(
        AS_OF, f, {code: PartStock(code, kind, "test part", material, on_hand, 0, on_order)},
        [SupplyOption(code, "SUP", Decimal(cost), pack, moq)], {"SUP": sup})


def only_line(plan):
    assert len(plan.lines) == 1
    return plan.lines[0]


def calendar_months(days: float) -> float:
    """Length in calendar-month positions of ``days`` days from AS_OF (the planner's
    period), to set a per-month standard deviation for a textbook per-week one."""
    end = np.datetime64(AS_OF, "D") + int(days)
    return float(positions([end], MONTH0)[0] - positions([AS_OF], MONTH0)[0])


def textbook_normal(lead_days: float, cycle_days: float) -> dd.DemandDistribution:
    """REFERENCE.md 8: D = 5 per week, sigma_D = 3 per week, independent weeks; as a per-month
    normal whose standard deviation over the cover equals 3 sqrt(weeks)."""
    weeks = (lead_days + cycle_days) / 7.0
    c = calendar_months(lead_days + cycle_days)
    return dd.normal([5.0], [3.0 * math.sqrt(weeks) / math.sqrt(c)])


# -- REFERENCE.md section 8 worked examples, through the planner -------------------------------


def test_order_up_to_example_48_1():
    # R = 4 weeks, L = 3 weeks, D = 5/week, sigma = 3, P1 = 95 % -> S = 35 + 1.645 * 7.94 = 48.1
    req = one_part(monthly=daily_rate_means(5 / 7), dist=textbook_normal(21, 28))
    plan = plan_orders(req, PlanOptions(service="cycle", fill_rate=0.95, pooling="part"))
    ln = only_line(plan)
    assert ln.policy == "order-up-to"
    assert ln.forecast_cover == pytest.approx(35.0, abs=1e-9)
    assert round(ln.level, 1) == 48.1
    assert ln.level == pytest.approx(35 + stats.norm.ppf(0.95) * 3 * math.sqrt(7), abs=1e-6)
    assert ln.raw_need == 49 and ln.qty == 49  # whole units, nothing on hand
    assert "order-up-to level 48.1" in ln.reason


def test_reorder_point_example_23_5():
    # L = 3 weeks, D = 5/week, sigma = 3 -> mu_L = 15, sigma_L = 5.196; P1 = 95 % -> s = 23.5
    req = one_part(monthly=daily_rate_means(5 / 7), dist=textbook_normal(21, 0), cycle=0.0)
    plan = plan_orders(req, PlanOptions(service="cycle", fill_rate=0.95, pooling="part",
                                        line_order_cost=Decimal("15")))
    ln = only_line(plan)
    assert ln.policy == "reorder-point"
    assert round(ln.level, 1) == 23.5
    assert ln.level == pytest.approx(15 + 1.6449 * 5.196, abs=2e-3)


def test_fill_rate_reorder_point_example_17_1():
    # P2 = 98 %, Q = 60: G(k) = 0.02 * 60 / 5.196 = 0.231 -> k = 0.399, s = 17.1
    annual = float(positions([date(2028, 2, 1)], MONTH0)[0])  # 12 months ahead
    assert annual == 12.0
    d_year = 5 / 7 * 365  # the 12 calendar months from February 2027
    v, r = 4.0, 0.25
    a = 59.9**2 * v * r / (2 * d_year)  # an ordering cost whose EOQ rounds up to 60
    req = one_part(monthly=daily_rate_means(5 / 7), dist=textbook_normal(21, 0), cycle=0.0)
    plan = plan_orders(req, PlanOptions(service="fill", fill_rate=0.98, pooling="part",
                                        line_order_cost=Decimal(str(round(a, 6)))))
    ln = only_line(plan)
    assert ln.policy == "reorder-point" and ln.order_quantity == 60
    assert round(ln.level, 1) == 17.1
    g = stats.norm.pdf(0.399) - 0.399 * stats.norm.sf(0.399)
    assert g == pytest.approx(0.02 * 60 / 5.196, abs=2e-3)  # the example's G(k)


def test_eoq_example_84_9_against_stockpyl():
    # D = 240 / yr, A = 15, v = 4.00, r = 25 % -> Q* = 84.9 (about 85 kits)
    req = one_part(monthly=np.full(H, 20.0), dist=dd.poisson([20.0]), cycle=7.0, lead=5.0)
    plan = plan_orders(req, PlanOptions(line_order_cost=Decimal("15"), carrying_rate=0.25,
                                        pooling="part"))
    ln = only_line(plan)
    assert round(ln.eoq, 1) == 84.9
    q_ref, _ = stockpyl_eoq.economic_order_quantity(15, 4.0 * 0.25, 240)
    assert ln.eoq == pytest.approx(q_ref, rel=1e-12)
    assert ln.policy == "reorder-point" and ln.order_quantity == 85


# -- stockpyl and scipy on the slow-mover path --------------------------------------------------


@pytest.mark.parametrize("p1", [0.90, 0.95, 0.99])
def test_poisson_order_up_to_matches_stockpyl_newsvendor(p1):
    # cycle service P1 with Poisson demand over L + R: the newsvendor base stock at the
    # critical ratio p / (p + h) = P1 (stockpyl.newsvendor.newsvendor_poisson)
    lam_day = 0.5 / 7
    req = one_part(monthly=daily_rate_means(lam_day), dist=dd.poisson([1.0]), lead=21,
                   cycle=7)
    ln = only_line(plan_orders(req, PlanOptions(service="cycle", fill_rate=p1, pooling="part")))
    mean = lam_day * 28
    s_ref, _ = stockpyl_nv.newsvendor_poisson(1.0, p1 / (1 - p1), mean)
    assert ln.level == s_ref
    assert ln.level == stats.poisson.ppf(p1, mean)


@pytest.mark.parametrize(("p1", "expected"), [(0.90, 3), (0.95, 4), (0.99, 5)])
def test_poisson_reference_quantiles(p1, expected):
    # REFERENCE.md 8: lambda = 0.5 / week, L = 3 -> mean 1.5: s = 3 / 4 / 5 (R = 0)
    req = one_part(monthly=daily_rate_means(0.5 / 7), dist=dd.poisson([1.0]), lead=21,
                   cycle=0.0)
    plan = plan_orders(req, PlanOptions(service="cycle", fill_rate=p1, pooling="part",
                                        line_order_cost=Decimal("0.01")))
    assert only_line(plan).level == expected


@pytest.mark.parametrize(("p1", "expected"), [(0.90, 4), (0.95, 5), (0.99, 7)])
def test_negative_binomial_reference_quantiles(p1, expected):
    # REFERENCE.md 8: mu = 1.5, sigma^2 = 3.0 -> r = 1.5, p = 0.5: 4 / 5 / 7; and scipy
    req = one_part(monthly=daily_rate_means(0.5 / 7), dist=dd.negative_binomial([1.0], 2.0),
                   lead=21, cycle=0.0)
    plan = plan_orders(req, PlanOptions(service="cycle", fill_rate=p1, pooling="part",
                                        line_order_cost=Decimal("0.01")))
    ln = only_line(plan)
    assert ln.level == expected
    assert ln.level == stats.nbinom.ppf(p1, 1.5, 0.5)


@pytest.mark.parametrize("target", [0.90, 0.95, 0.98])
def test_fill_rate_level_against_stockpyl_poisson_loss(target):
    # periodic review fill: 1 - (n(S; L+R) - n(S; L)) / E[D_R] with the Poisson loss
    # function of stockpyl.loss_functions; S is the smallest level reaching the target
    lam_day = 1.2 / 7
    req = one_part(monthly=daily_rate_means(lam_day), dist=dd.poisson([1.0]), lead=14,
                   cycle=14)
    ln = only_line(plan_orders(req, PlanOptions(fill_rate=target, pooling="part")))
    m_l, m_r = lam_day * 14, lam_day * 14

    def fill(s):
        return 1 - (stockpyl_loss.poisson_loss(s, m_l + m_r)[0]
                    - stockpyl_loss.poisson_loss(s, m_l)[0]) / m_r

    s = int(ln.level)
    assert fill(s) >= target > fill(s - 1)
    assert ln.expected_fill == pytest.approx(fill(s), abs=1e-9)  # qty = S, nothing on hand


def test_normal_fill_uses_the_standard_normal_loss():
    # E[(D - S)^+] = sigma G((S - mu) / sigma), G(k) = phi(k) - k (1 - Phi(k)) (scipy)
    req = one_part(monthly=daily_rate_means(5 / 7), dist=textbook_normal(21, 28),
                   on_hand=40)
    ln = only_line(plan_orders(req, PlanOptions(fill_rate=0.95, pooling="part")))

    def g(k):
        return stats.norm.pdf(k) - k * stats.norm.sf(k)

    s = ln.position + ln.qty
    mu2, sd2 = 35.0, 3 * math.sqrt(7)
    mu1, sd1 = 15.0, 3 * math.sqrt(3)
    short = sd2 * g((s - mu2) / sd2) - sd1 * g((s - mu1) / sd1)
    assert ln.expected_fill == pytest.approx(1 - short / 20.0, abs=1e-9)


# -- operational time, seasons, pre-season --------------------------------------------------------


def seasonal_means(n: int = H) -> np.ndarray:
    """A spring peak: months from February; 2 per day in March to May, 0.5 otherwise."""
    months = (np.arange(n) + 1) % 12  # 0 = January
    daily = np.where(np.isin(months, [2, 3, 4]), 2.0, 0.5)
    return daily * days_in_months(MONTH0, n)


def window(start: date, end: date) -> float:
    """Expected demand of seasonal_means between two days, summed day by day."""
    total, d = 0.0, start
    while d < end:
        total += 2.0 if d.month in (3, 4, 5) else 0.5
        d += timedelta(days=1)
    return total


def test_calendar_integrates_day_by_day():
    cal = DemandCalendar.build(MONTH0, seasonal_means()[None, :])
    a, b = date(2027, 2, 10), date(2027, 4, 17)
    got = cal.between([0], positions([a], MONTH0), positions([b], MONTH0))[0]
    assert got == pytest.approx(window(a, b), abs=1e-9)


def test_pre_season_covers_through_the_next_possible_delivery():
    season = date(2027, 3, 1)
    req = one_part(monthly=seasonal_means(), dist=dd.negative_binomial([1.0], 1.5), lead=14,
                   sd=5, cycle=30, on_hand=30, kind="kit")
    plan = plan_orders(req, PlanOptions(season_start=season, fill_rate=0.95, pooling="part"))
    ln = only_line(plan)
    # plenty of stock until the season: need date = season start, order by = need - lead
    assert ln.need_date == season
    assert ln.order_by == season - timedelta(days=14) == plan.orders[0].order_by
    assert "late" not in ln.caps
    # cover: now to season start + review + the extra season lead time (2 spreads = 10 d)
    end = season + timedelta(days=30 + 10)
    assert ln.cover_days == (end - AS_OF).days
    assert ln.forecast_cover == pytest.approx(window(AS_OF, end), abs=1e-6)
    # build-ahead: the peak demand in those extra 20 days
    assert ln.build_ahead == pytest.approx(window(season + timedelta(days=30), end), abs=1e-6)
    assert "build-ahead" in ln.reason


def test_pre_season_orders_early_when_stock_runs_out_first():
    season = date(2027, 3, 1)
    req = one_part(monthly=seasonal_means(), dist=dd.poisson([1.0]), lead=10, cycle=14,
                   on_hand=7, kind="kit")
    ln = only_line(plan_orders(req, PlanOptions(season_start=season, fill_rate=0.9,
                                                pooling="part")))
    # 7 units at 0.5 a day last 14 days: need date 2027-02-15, order by 10 days earlier
    assert ln.need_date == date(2027, 2, 15)
    assert ln.order_by == date(2027, 2, 5)


def test_season_start_must_be_after_the_plan_date():
    req = one_part(monthly=seasonal_means(), dist=dd.poisson([1.0]))
    with pytest.raises(PlanningError, match="season start 2027-01-15 is not after the plan"):
        plan_orders(req, PlanOptions(season_start=date(2027, 1, 15)))


def test_operational_time_matches_a_stationary_window_of_equal_demand():
    # Poisson demand: a seasonal window and a flat one with the same expected demand need
    # the same cycle-service level (time change of a Poisson process)
    flat = one_part(monthly=daily_rate_means(window(AS_OF, AS_OF + timedelta(days=49)) / 49),
                    dist=dd.poisson([1.0]))
    seas = one_part(monthly=seasonal_means(), dist=dd.poisson([1.0]))
    opt = PlanOptions(service="cycle", fill_rate=0.95, pooling="part")
    a, b = only_line(plan_orders(flat, opt)), only_line(plan_orders(seas, opt))
    assert a.forecast_cover == pytest.approx(b.forecast_cover)
    assert a.level == b.level == stats.poisson.ppf(0.95, b.forecast_cover)


# -- lead-time spread ------------------------------------------------------------------------------


def test_lead_time_spread_adds_d2_sigma_lt2():
    # sigma^2 over the cover = L sigma_D^2 + D^2 sigma_LT^2 (REFERENCE.md 8)
    base = one_part(monthly=daily_rate_means(1.0), dist=dd.poisson([1.0]), lead=20, cycle=10)
    spread = one_part(monthly=daily_rate_means(1.0), dist=dd.poisson([1.0]), lead=20, cycle=10,
                      sd=6)
    opt = PlanOptions(service="cycle", fill_rate=0.95, pooling="part")
    s0 = only_line(plan_orders(base, opt)).level
    s1 = only_line(plan_orders(spread, opt)).level
    mean = 30.0
    var = mean + 1.0**2 * 6**2  # per day: D = 1, sigma_LT = 6 days
    n, p = mean**2 / (var - mean), mean / var
    assert s0 == stats.poisson.ppf(0.95, mean)
    assert s1 == stats.nbinom.ppf(0.95, n, p)


# -- supplier choice -------------------------------------------------------------------------------


def two_sources(on_hand: int):
    sups = {"FAST": SupplierTerms("FAST", "Fast", 3, 0, Decimal("0"), 7),
            "SLOW": SupplierTerms("SLOW", "Slow", 30, 0, Decimal("0"), 7)}
    f = DemandForecast(("P",), MONTH0, daily_rate_means(1.0)[None, :], dd.poisson([1.0]),
                       np.array([True]))
    return PlanRequest(AS_OF, f, {"P": PartStock("P", "o_ring", "", None, on_hand)},
                       [SupplyOption("P", "FAST", Decimal("2.00")),
                        SupplyOption("P", "SLOW", Decimal("1.00"))], sups)


def test_cheapest_source_that_meets_the_need_date():
    ln = only_line(plan_orders(two_sources(on_hand=45), PlanOptions(pooling="part")))
    assert ln.supplier == "SLOW"  # 45 units last 45 days: the slow source is in time
    assert ln.raw_need > 0
    assert "cheapest" in ln.supplier_choice and "FAST" in ln.supplier_choice


def test_faster_source_when_the_cheap_one_is_late():
    ln = only_line(plan_orders(two_sources(on_hand=5), PlanOptions(pooling="part")))
    assert ln.supplier == "FAST"  # 5 units last 5 days; the slow one takes 30
    assert "late" in ln.supplier_choice and "SLOW" in ln.supplier_choice


# -- packs, minimums, shelf life, supplier minimum, budget -----------------------------------------


def test_packs_and_minimum_order_quantity():
    req = one_part(monthly=daily_rate_means(0.2), dist=dd.poisson([1.0]), pack=25, moq=50,
                   cost="0.20")
    ln = only_line(plan_orders(req, PlanOptions(pooling="part")))
    assert ln.raw_need < 50 and ln.qty == 50 and ln.packs == 2
    assert "rounded to 50 (2 x 25, minimum 50)" in ln.reason


def test_a_part_counted_in_ml_carries_its_unit_through_the_plan():
    """Grease is bought and used in ml: the line keeps the part's unit and its reasons say
    ml after the demand, the stock, the order and the packs (the same figures as the test
    above, whose part is counted in pieces)."""
    from dataclasses import replace

    from inventory.ordering.text import line_sentence, short_reason

    req = one_part(monthly=daily_rate_means(0.2), dist=dd.poisson([1.0]), pack=25, moq=50,
                   cost="0.20", code="GREASE", kind="grease")
    req = replace(req, stock={"GREASE": replace(req.stock["GREASE"], unit="ml")})
    ln = only_line(plan_orders(req, PlanOptions(pooling="part")))
    assert ln.unit == "ml" and ln.qty == 50
    assert "order 50 ml (2 x 25 ml)" in ln.reason and "on hand 0 ml" in ln.reason
    assert short_reason(ln).startswith("level ") and " ml for " in short_reason(ln)
    assert ln.to_dict()["unit"] == "ml"
    pieces = replace(ln, unit="each")
    assert " ml" not in line_sentence(pieces) and " ml" not in short_reason(pieces)


def test_shelf_life_cap_and_a_minimum_that_forces_more():
    # NBR: ISO 2230 group B, 7 years from the end of the cure quarter (REFERENCE.md 5).
    # A part selling 1 a year, bought in packs of 25 (min 25): a new lot cured ~6 months
    # before its arrival is used until 7 years after that quarter, less 6 months: about
    # 6 units. The minimum 25 is ordered and the line says it is above the cap.
    req = one_part(monthly=np.full(H, 1 / 12), dist=dd.poisson([1.0]), pack=25, moq=25,
                   cost="0.20", material="NBR", kind="o_ring", lead=2, cycle=7)
    ln = only_line(plan_orders(req, PlanOptions(fill_rate=0.99, pooling="part")))
    assert ln.shelf_cap is not None and ln.shelf_cap < 25
    assert ln.qty == 25
    assert "min_forced" in ln.caps and "shelf_life" in ln.caps
    assert "forces" in ln.reason and "above the cap" in ln.reason
    # the cap: expected use from now to the storage limit less the margin
    limit = ln.shelf_limit
    assert limit.year - (AS_OF.year) in (6, 7)
    expected = (positions([limit], MONTH0)[0] - positions([AS_OF], MONTH0)[0]) / 12
    assert ln.shelf_cap == math.floor(expected + 1e-9)


def test_shelf_life_cap_cuts_an_order_and_shows_the_service_cost():
    # AU (group A, 5 years): a slow part with a big need from a long review
    req = one_part(monthly=np.full(H, 0.5), dist=dd.poisson([1.0]), pack=1, moq=1,
                   cost="5.00", material="AU", kind="dust_wiper", lead=2, cycle=3650)
    ln = only_line(plan_orders(req, PlanOptions(fill_rate=0.9, pooling="part")))
    assert "shelf_life" in ln.caps and "min_forced" not in ln.caps
    assert ln.qty == ln.shelf_cap < ln.rounded
    assert ln.fill_before_caps > ln.expected_fill
    plan = plan_orders(req, PlanOptions(fill_rate=0.9, pooling="part"))
    assert any(u.part == "KIT-A" and u.reason.startswith("shelf life") for u in plan.uncovered)


def test_top_up_to_the_supplier_minimum_order_value():
    req = one_part(monthly=daily_rate_means(0.5), dist=dd.poisson([1.0]), cost="2.00",
                   min_value="100", lead=2, cycle=7)
    plan = plan_orders(req, PlanOptions(pooling="part"))
    ln = only_line(plan)
    assert plan.orders[0].total >= Decimal("100")
    assert ln.topped_up > 0 and "top_up" in ln.caps and "minimum order of 100.00" in ln.reason


def test_budget_below_every_minimum_order_is_refused():
    req = one_part(monthly=daily_rate_means(2.0), dist=dd.poisson([1.0]), min_value="50")
    with pytest.raises(PlanningError, match=r"budget 20\.00 is below the smallest supplier "
                                            r"minimum order \(50\.00 at SUP\)"):
        plan_orders(req, PlanOptions(budget=Decimal("20")))


def test_budget_goes_where_each_unit_of_money_fills_most():
    # two parts with the same demand, one ten times dearer: a small budget buys the cheap one
    sup = SupplierTerms("SUP", "Supplier", 5, 0, Decimal("0"), 14)
    mm = np.vstack([daily_rate_means(1.0), daily_rate_means(1.0)])
    f = DemandForecast(("CHEAP", "DEAR"), MONTH0, mm, dd.poisson([1.0, 1.0]),
                       np.array([True, True]))
    req = PlanRequest(AS_OF, f, {}, [SupplyOption("CHEAP", "SUP", Decimal("1.00")),
                                     SupplyOption("DEAR", "SUP", Decimal("10.00"))],
                      {"SUP": sup})
    plan = plan_orders(req, PlanOptions(budget=Decimal("40"), pooling="part"))
    by = {ln.part: ln for ln in plan.lines}
    assert plan.budget_spent <= Decimal("40")
    assert by["CHEAP"].budget_cut == 0 and by["DEAR"].budget_cut > 0
    assert plan.expected_fill < plan.fill_before_budget
    assert any(u.part == "DEAR" and u.reason.startswith("budget") for u in plan.uncovered)


def test_part_without_supplier_item_is_listed_not_dropped():
    sup = SupplierTerms("SUP", "Supplier", 5, 0, Decimal("0"), 14)
    f = DemandForecast(("A", "ORPHAN"), MONTH0, np.vstack([daily_rate_means(1.0)] * 2),
                       dd.poisson([1.0, 1.0]), np.array([True, True]))
    req = PlanRequest(AS_OF, f, {}, [SupplyOption("A", "SUP", Decimal("1"))], {"SUP": sup})
    plan = plan_orders(req)
    [u] = [u for u in plan.uncovered if u.part == "ORPHAN"]
    assert u.reason.startswith("no supplier item") and u.need > 0


def test_unknown_supplier_in_an_option_is_refused():
    req = one_part(monthly=daily_rate_means(1.0), dist=dd.poisson([1.0]))
    bad = PlanRequest(req.as_of, req.forecast, req.stock,
                      [SupplyOption("KIT-A", "NOPE", Decimal("1"))], req.suppliers)
    with pytest.raises(PlanningError, match="unknown supplier 'NOPE'"):
        plan_orders(bad)


# -- kits versus loose seals -----------------------------------------------------------------------


def kit_request(kit_cost: str, wiper_on_hand: int):
    sup = SupplierTerms("SUP", "Supplier", 5, 0, Decimal("0"), 14)
    codes = ("KIT", "WIPER", "FOAM")
    # the loose seals sell only in kits here: their own level is 0, all stock is spare
    mm = np.vstack([daily_rate_means(1.0), np.zeros(H), np.zeros(H)])
    f = DemandForecast(codes, MONTH0, mm, dd.poisson([1.0, 1.0, 1.0]), np.ones(3, bool))
    stock = {"KIT": PartStock("KIT", "kit", "", None, 0),
             "WIPER": PartStock("WIPER", "dust_wiper", "", None, wiper_on_hand),
             "FOAM": PartStock("FOAM", "foam_ring", "", None, 200)}
    opts = [SupplyOption("KIT", "SUP", Decimal(kit_cost)),
            SupplyOption("WIPER", "SUP", Decimal("8.00"), 2, 2),
            SupplyOption("FOAM", "SUP", Decimal("1.00"), 10, 10)]
    kit = KitSpec("KIT", "FORK", ServiceLevel.LOWER_LEG, (("WIPER", 2), ("FOAM", 2)))
    return PlanRequest(AS_OF, f, stock, opts, {"SUP": sup}, (kit,))


def test_kit_assembled_from_loose_stock_when_cheaper():
    # loose: 2 x 8.00 + 2 x 1.00 = 18.00 per kit < 50.00 whole; 10 spare wipers make 5 kits
    plan = plan_orders(kit_request("50.00", wiper_on_hand=10), PlanOptions(pooling="part"))
    [d] = plan.kits
    assert d.cost_loose == Decimal("18.00") and d.from_stock == 5
    kit = next(ln for ln in plan.lines if ln.part == "KIT")
    assert kit.qty == d.need - 5
    assert "5 of" in d.reason and "assembled from loose stock" in d.reason


def test_kit_bought_whole_when_cheaper():
    plan = plan_orders(kit_request("15.00", wiper_on_hand=10), PlanOptions(pooling="part"))
    [d] = plan.kits
    assert d.how == "whole" and d.from_stock == 0
    assert "bought whole: 15.00 per kit vs 18.00 from loose seals" == d.reason


def test_kit_mode_cheaper_moves_the_need_to_the_loose_seals():
    plan = plan_orders(kit_request("50.00", wiper_on_hand=0),
                       PlanOptions(pooling="part", kit_mode="cheaper"))
    [d] = plan.kits
    assert d.how == "assemble" and d.from_loose == d.need
    by = {ln.part: ln for ln in plan.lines}
    assert by["KIT"].qty == 0
    assert by["WIPER"].for_kits == 2 * d.need and by["WIPER"].qty >= 2 * d.need


def test_kit_mode_cheaper_never_reorders_a_seal_the_shelf_covers():
    # issue 11 item 9, worked by hand: no spare wipers, so every kit needs 2 wipers ordered;
    # the 200 foam rings on the shelf (their own level is 0) cover 2 per kit, so no foam
    # ring is ordered for the kits and the ones used are booked as going into kits
    plan = plan_orders(kit_request("50.00", wiper_on_hand=0),
                       PlanOptions(pooling="part", kit_mode="cheaper"))
    [d] = plan.kits
    assert 0 < 2 * d.need <= 200
    assert d.from_surplus == {"FOAM": 2 * d.need} and "FOAM" not in d.adds
    by = {ln.part: ln for ln in plan.lines}
    assert by["FOAM"].for_kits == 0 and by["FOAM"].qty == 0
    assert by["FOAM"].to_kits == 2 * d.need
    assert "already held" in d.reason
    from inventory.ordering.text import short_reason

    wiper = short_reason(by["WIPER"])
    assert f"+{2 * d.need} for kits" in wiper and "level 0 for" in wiper
    assert f"(-{2 * d.need} into kits)" in short_reason(by["FOAM"])
    # with only 3 foam rings on the shelf, 2 x need - 3 are ordered, never more
    small = kit_request("50.00", wiper_on_hand=0)
    stock = dict(small.stock)
    stock["FOAM"] = PartStock("FOAM", "foam_ring", "", None, 3)
    plan = plan_orders(PlanRequest(small.as_of, small.forecast, stock, small.options,
                                   small.suppliers, small.kits),
                       PlanOptions(pooling="part", kit_mode="cheaper"))
    [d] = plan.kits
    foam = next(ln for ln in plan.lines if ln.part == "FOAM")
    assert foam.for_kits == 2 * d.need - 3 and d.from_surplus == {"FOAM": 3}


# -- properties (hypothesis) -----------------------------------------------------------------------


@settings(max_examples=300, deadline=None)
@given(need=st.integers(0, 500), pack=st.integers(1, 50), moq=st.integers(1, 120),
       cap=st.one_of(st.none(), st.integers(0, 600)))
def test_rounding_properties(need, pack, moq, cap):
    r = round_order(need, pack=pack, moq=moq, cap=cap)
    if need <= 0:
        assert r.qty == 0
        return
    assert r.qty % pack == 0 and r.qty >= moq and r.qty >= pack
    assert r.rounded >= need  # rounding never orders below the need
    if not r.capped:
        assert r.qty == r.rounded >= need
    if cap is not None and r.qty > cap:
        assert r.min_forced  # above the cap only when the minimum forces it
        assert r.qty == r.minimum
    if r.min_forced:
        assert r.capped and r.qty > (cap or 0)


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(rates=st.lists(st.floats(0.02, 3.0), min_size=1, max_size=4),
       packs=st.lists(st.sampled_from([1, 2, 10, 25]), min_size=4, max_size=4),
       costs=st.lists(st.decimals("0.10", "40.00", places=2), min_size=4, max_size=4),
       budget=st.one_of(st.none(), st.decimals("60", "3000", places=2)),
       material=st.sampled_from(["NBR", "AU", None]))
def test_plan_properties(rates, packs, costs, budget, material):
    n = len(rates)
    codes = tuple(f"P{i}" for i in range(n))
    sup = SupplierTerms("SUP", "Supplier", 5, 2, Decimal("50"), 14)
    f = DemandForecast(codes, MONTH0, np.vstack([daily_rate_means(r) for r in rates]),
                       dd.negative_binomial(np.ones(n), 1.5), np.ones(n, bool))
    stock = {c: PartStock(c, "o_ring", "", material, 1) for c in codes}
    opts = [SupplyOption(c, "SUP", costs[i], packs[i], packs[i]) for i, c in enumerate(codes)]
    plan = plan_orders(PlanRequest(AS_OF, f, stock, opts, {"SUP": sup}),
                       PlanOptions(budget=budget))
    for ln in plan.lines:
        need = max(ln.raw_need - ln.assembled, 0) + ln.for_kits
        if ln.qty:
            assert ln.qty % ln.pack_size == 0
        if not ln.caps and need > 0:
            assert ln.qty >= need  # never below the need unless a cap says why
        if ln.shelf_cap is not None and ln.qty > ln.shelf_cap:
            # above the shelf-life cap only when a minimum forces it, and the line says so
            assert "min_forced" in ln.caps and "forces" in ln.reason
    if budget is not None:
        assert plan.budget_spent <= budget  # never over budget
    for o in plan.orders:
        assert o.total == sum((ln.value for ln in o.lines), Decimal(0))


@settings(max_examples=100, deadline=None)
@given(data=st.data())
def test_greedy_budget_never_exceeds_and_respects_order(data):
    n_lines = data.draw(st.integers(1, 6))
    line, cost, gain = [], [], []
    for i in range(n_lines):
        k = data.draw(st.integers(1, 5))
        g = sorted(data.draw(st.lists(st.floats(0, 10), min_size=k, max_size=k)), reverse=True)
        for j in range(k):
            line.append(i)
            cost.append(data.draw(st.integers(1, 100)))
            gain.append(g[j])
    budget = data.draw(st.integers(0, 400))
    taken = greedy_budget(line, cost, gain, budget)
    spent = 0
    for i in range(n_lines):
        idx = [j for j, ln in enumerate(line) if ln == i][: taken[i]]
        spent += sum(cost[j] for j in idx)
    assert spent <= budget


def test_budget_within_one_percent_of_exhaustive_search():
    """Issue 11 item 9: on small cases (1-4 lines, 1-4 increments each) the budget's
    allocation fills within 1 % of the best any choice of increments could, found by
    exhaustive search. Gains are expected units filled by a Poisson demand at each
    order-up-to level, E[min(D, S)], computed with scipy (the oracle), so they are concave
    as the planner's are; the first increment carries a minimum order quantity."""
    import itertools

    rng = np.random.default_rng(11)
    checked = 0
    for _ in range(400):
        m = int(rng.integers(1, 5))
        line, cost, gain, per = [], [], [], []
        base = 0.0
        for j in range(m):
            lam, pack = rng.uniform(0.3, 12.0), int(rng.choice([1, 2, 5, 10]))
            price, moq, k = int(rng.integers(1, 60)), pack * int(rng.integers(1, 3)), \
                int(rng.integers(1, 5))
            on_hand = int(rng.integers(0, 3))
            levels = [on_hand] + [on_hand + moq + pack * i for i in range(k)]
            ks = np.arange(0, 200)
            pmf = stats.poisson.pmf(ks, lam)
            filled = [float((np.minimum(ks, s) * pmf).sum()) for s in levels]
            base += filled[0]
            for i in range(k):
                line.append(j)
                cost.append(price * (levels[i + 1] - levels[i]))
                gain.append(filled[i + 1] - filled[i])
            per.append(k)
        budget = int(rng.integers(0, sum(cost) + 1))

        def value(t, m=m, line=line, cost=cost, gain=gain):
            c = g = 0.0
            for j in range(m):
                idx = [i for i, ln in enumerate(line) if ln == j][: t[j]]
                c += sum(cost[i] for i in idx)
                g += sum(gain[i] for i in idx)
            return c, g

        taken = greedy_budget(np.array(line), cost, np.array(gain), budget)
        spent, got = value(taken)
        assert spent <= budget
        best = max(g for t in itertools.product(*[range(k + 1) for k in per])
                   for c, g in [value(t)] if c <= budget)
        # expected units filled, stock on hand included, within 1 % of the optimum
        assert base + got >= 0.99 * (base + best) - 1e-9
        checked += 1
    assert checked == 400


def test_budget_blocking_a_supplier_whose_last_line_orders_nothing():
    # found on the demo (pre-season plan, --budget 5000): a blocked supplier's line with no
    # increments lies beyond the last line that has some; it must simply get nothing
    taken = greedy_budget(np.array([0, 0, 1]), [5, 5, 5], np.array([1.0, 0.5, 0.7]), 10,
                          blocked=[1, 4])
    # worked by hand: line 1 blocked, so both of line 0's increments (10 of 10) are bought
    assert taken.tolist() == [2, 0]
