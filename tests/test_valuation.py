"""The valuation arithmetic of the month-end report, checked against textbook worked examples
and definitions, and against scipy as a reference library.
"""

from __future__ import annotations

from datetime import date
from decimal import Decimal

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from scipy import stats

from inventory.stock import valuation as val

D = Decimal

# Kieso, Weygandt and Warfield, *Intermediate Accounting*, inventory cost-flow chapter: the
# running illustration of one month's purchases and one sale, valued by FIFO, by the moving
# average and by the periodic weighted average (figures recalled from memory):
#   Mar 2 buy 2,000 @ 4.00; Mar 15 buy 6,000 @ 4.40; Mar 19 sell 4,000; Mar 30 buy 2,000 @ 4.75.
#   Goods available 43,900. FIFO: ending inventory 27,100, cost of goods sold 16,800.
#   Moving average: 4.30 after Mar 15, 4.45 after Mar 30; ending 26,700, cost of goods sold
#   17,200. Weighted average 4.39; ending 26,340.
TEXTBOOK = [(2000, D("4.00")), (6000, D("4.40")), (-4000, None), (2000, D("4.75"))]


def test_fifo_textbook_example():
    layers: tuple[val.Layer, ...] = ()
    cogs = D(0)
    for i, (qty, cost) in enumerate(TEXTBOOK):
        if qty > 0:
            layers += (val.Layer(qty, cost, val.fifo_key(None, date(2026, 3, 1 + i))),)
        else:
            taken, layers = val.fifo_take(layers, -qty)
            cogs += taken
    assert cogs == D("16800")  # Kieso et al., FIFO cost of goods sold (recalled from memory)
    assert val.layers_value(layers) == D("27100")  # FIFO ending inventory
    assert sum(la.qty for la in layers) == 6000


def test_moving_average_textbook_example():
    state = val.AverageState()
    seen = []
    for qty, cost in TEXTBOOK:
        state, v = val.average_step(state, qty, cost)
        seen.append((state.unit_cost, v))
    assert seen[1][0] == D("4.30")  # Kieso et al., unit cost after Mar 15 (recalled from memory)
    assert seen[2][1] == D("-17200")  # cost of the 4,000 sold
    assert seen[3][0] == D("4.45")  # unit cost after Mar 30
    assert state.value == D("26700") and state.qty == 6000  # moving-average ending inventory
    # the weighted average of the same book for contrast: 43,900 / 10,000 = 4.39 -> 26,340
    assert D("43900") / 10000 * 6000 == D("26340")
    assert state.value != D("26340")


def test_fifo_follows_cure_order_not_arrival():
    """The ledger issues the oldest cure quarter first, so a late delivery of old rubber is
    taken before an early delivery of fresh rubber (ISO 2230 practice, REFERENCE.md 5)."""
    fresh = val.Layer(5, D("2.00"), val.fifo_key("2026Q2", date(2026, 1, 5), 1))
    old = val.Layer(5, D("1.00"), val.fifo_key("2025Q1", date(2026, 2, 5), 2))
    metal = val.Layer(5, D("9.00"), val.fifo_key(None, date(2025, 1, 1), 3))
    cost, left = val.fifo_take([metal, fresh, old], 7)
    assert cost == 5 * D("1.00") + 2 * D("2.00")
    assert [(la.qty, la.unit_cost) for la in left] == [(3, D("2.00")), (5, D("9.00"))]
    with pytest.raises(ValueError, match="cannot take 20"):
        val.fifo_take(left, 20)


@given(st.lists(st.tuples(st.integers(-30, 40).filter(bool),
                          st.decimals(min_value=0, max_value=50, places=2)), max_size=40))
def test_moving_average_keeps_value_consistent(events):
    """Whatever the order, the value leaves with the last unit (no residue) and never goes
    negative; the average stays within the range of the costs that came in."""
    state = val.AverageState()
    costs = []
    for qty, cost in events:
        if qty < 0 and -qty > state.qty:
            continue
        state, v = val.average_step(state, qty, cost)
        if qty > 0:
            costs.append(cost)
        assert state.value >= 0
        if state.qty == 0:
            assert state.value == 0
        else:
            assert min(costs) - D("0.01") <= state.unit_cost <= max(costs) + D("0.01")


def test_turns_and_days_of_supply_definitions():
    """Heizer and Render, *Operations Management*, supply-chain chapter: inventory turnover =
    cost of goods sold / inventory investment, weeks of supply = inventory investment /
    (annual cost of goods sold / 52) (definitions recalled from memory; the figures here are
    our own)."""
    cogs_year, inventory = D("120000"), D("20000")
    assert val.turns(cogs_year, inventory, period_days=365) == pytest.approx(6.0)
    weeks = val.days_of_supply(inventory, cogs_year, period_days=52 * 7) / 7  # a 52-week year
    assert weeks == pytest.approx(float(inventory / (cogs_year / 52)))
    # one month annualised: 10,000 issued in a 30-day month against 20,000 average stock
    assert val.turns(D("10000"), D("20000"), period_days=30) == pytest.approx(0.5 * 365 / 30)
    # average stock is the textbook (opening + closing) / 2 for two points
    assert val.average_stock([D("18000"), D("22000")]) == D("20000")
    assert val.turns(D("5"), D("0"), period_days=30) is None
    assert val.days_of_supply(10, 0, period_days=30) is None


@given(stock=st.integers(1, 10_000), usage=st.integers(1, 10_000), days=st.integers(1, 400))
def test_littles_law_links_turns_and_days_of_supply(stock, usage, days):
    """Little's law (Little 1961; Chopra and Meindl, *Supply Chain Management*, flow time =
    inventory / throughput): with steady stock, days of supply x annual turns = 365."""
    t = val.turns(D(usage), D(stock), period_days=days)
    dos = val.days_of_supply(stock, usage, period_days=days)
    assert t * dos == pytest.approx(365.0)


# Heizer and Render, *Operations Management*, inventory chapter, ABC example of ten items
# (annual volume x unit cost; figures and the percent-of-value column recalled from memory).
# The book puts the first two items in A (72 %), the next three in B (23 %), the rest in C.
ABC_BOOK = [90000, 77000, 26350, 15001, 12500, 8502, 1200, 850, 504, 150]
ABC_BOOK_PCT = [38.8, 33.2, 11.4, 6.5, 5.4, 3.7, 0.5, 0.4, 0.2, 0.1]
ABC_BOOK_CLASS = list("AABBBCCCCC")


def test_abc_textbook_example():
    order, cum = val.pareto(ABC_BOOK)
    total = sum(ABC_BOOK)
    assert [round(100 * ABC_BOOK[i] / total, 1) for i in order] == ABC_BOOK_PCT
    assert cum[-1] == pytest.approx(1.0)
    # the book draws the A/B line near 70 % of value and the B/C line near 95 %
    assert val.abc_classes(ABC_BOOK, a_share=0.70, b_share=0.95) == ABC_BOOK_CLASS
    # shuffled input: classes follow the items, not the positions
    shuffled = ABC_BOOK[::-1]
    assert val.abc_classes(shuffled, a_share=0.70, b_share=0.95) == ABC_BOOK_CLASS[::-1]


def test_abc_defaults_and_edges():
    # with the common-practice 80 % line the item that crosses 80 % is still A
    assert val.abc_classes(ABC_BOOK)[:3] == ["A", "A", "A"]
    assert val.abc_classes([0, 0]) == ["C", "C"]
    assert val.abc_classes([5, 0]) == ["A", "C"]
    with pytest.raises(ValueError):
        val.abc_classes([1], a_share=0.9, b_share=0.8)


def test_xyz_cv_matches_scipy():
    rng = np.random.default_rng(7)
    demand = rng.poisson([[20], [3], [0.3]], size=(3, 12)).astype(float)
    classes, cv = val.xyz_classes(demand)
    # scipy.stats.variation is the coefficient of variation with the population SD
    assert cv == pytest.approx(stats.variation(demand, axis=1))
    expect = ["X" if c <= 0.5 else "Y" if c <= 1.0 else "Z" for c in cv]
    assert classes == expect
    assert classes[0] == "X"


def test_xyz_cut_offs_and_no_demand():
    steady = [10] * 12
    varying = [0, 20] * 6  # mean 10, population SD 10 -> CV 1.0: still Y
    lumpy = [0] * 11 + [12]
    none = [0] * 12
    classes, cv = val.xyz_classes([steady, varying, lumpy, none])
    assert classes == ["X", "Y", "Z", "Z"]
    assert cv[1] == pytest.approx(1.0) and np.isnan(cv[3])
    # sample SD (ddof=1) as an option
    _, cv1 = val.xyz_classes([varying], ddof=1)
    assert cv1[0] == pytest.approx(stats.variation(varying, ddof=1))


def test_slow_and_dead_stock():
    as_of = date(2026, 11, 30)
    assert val.add_months(as_of, -6) == date(2026, 5, 30)
    assert val.add_months(date(2026, 3, 31), -1) == date(2026, 2, 28)
    assert val.stock_status(5, date(2025, 11, 30), None, as_of) == "dead"
    assert val.stock_status(5, date(2025, 12, 1), None, as_of) == "slow"
    assert val.stock_status(5, date(2026, 5, 30), None, as_of) == "slow"
    assert val.stock_status(5, date(2026, 5, 31), None, as_of) is None
    assert val.stock_status(0, date(2020, 1, 1), None, as_of) is None  # nothing on the shelf
    # never issued: aged from its first arrival
    assert val.stock_status(5, None, date(2026, 11, 1), as_of) is None
    assert val.stock_status(5, None, date(2024, 1, 1), as_of) == "dead"
    assert val.stock_status(5, date(2026, 1, 1), None, as_of, slow_months=3,
                            dead_months=9) == "dead"


def test_shelf_status():
    as_of = date(2026, 11, 30)
    assert val.shelf_status(date(2026, 11, 29), as_of) == "past"
    assert val.shelf_status(date(2026, 11, 30), as_of) == "soon"
    assert val.shelf_status(date(2027, 5, 30), as_of) == "soon"
    assert val.shelf_status(date(2027, 5, 31), as_of) is None
    assert val.shelf_status(None, as_of) is None


def test_fallback_reorder():
    # 2 a day, lead 10 + review 5 days -> reorder point 30 (common practice min/max rule)
    assert val.fallback_reorder(2.0, lead_days=10, review_days=5, position=31) == (30, 0)
    # at 30: order up to 30 + 30 days x 2 = 90 -> 60, in packs of 25 -> 75
    assert val.fallback_reorder(2.0, lead_days=10, review_days=5, position=30, pack=25) == (30, 75)
    assert val.fallback_reorder(2.0, lead_days=10, review_days=5, position=30,
                                minimum=100) == (30, 100)
    assert val.fallback_reorder(0.0, lead_days=10, review_days=5, position=0) == (0, 0)
    assert val.round_up_to_pack(1, pack=10) == 10 and val.round_up_to_pack(0, pack=10) == 0
