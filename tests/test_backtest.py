"""Backtest engine: simulator worked by hand, CSV readers, and a small run on real data.

Outside references: a periodic-review order-up-to simulation worked by hand (below), the
M5 definition of RMSSE (Makridakis, Spiliotis and Assimakopoulos 2022) recomputed
independently, a plain per-series loop as a reference simulator, and the carparts data
set (Hyndman, Koehler, Ord and Snyder 2008, R package expsmooth; ../shared/data) for a
small end-to-end run, skipped when the file is absent.
"""

from __future__ import annotations

import json
import os
from pathlib import Path

import numpy as np
import pytest

from inventory.ordering import backtest as bt

CARPARTS = Path(os.environ.get(
    "INVENTORY_CARPARTS_CSV",
    Path(__file__).resolve().parents[2] / "shared" / "data" / "carparts_dev.csv",
))


def test_simulator_worked_by_hand() -> None:
    # S = 5, lead time 1, monthly review, demand 3, 4, 0, 6, 1 (worked by hand):
    # m1: order 0; serve 3 -> on hand 2.  m2: position 2, order 3; serve 2 of 4 -> net -2.
    # m3: receive 3 -> net 1, order 4; no demand -> on hand 1.
    # m4: receive 4 -> net 5, order 0; serve 5 of 6 -> net -1.
    # m5: nothing arrives, position -1, order 6; serve 0 of 1 -> net -2.
    sim = bt.simulate_order_up_to(np.array([5]), np.array([[3, 4, 0, 6, 1]]), lead_time=1)
    assert sim.demand[0] == 14
    assert sim.served[0] == 10
    np.testing.assert_array_equal(sim.on_hand[0], [2, 0, 1, 0, 0])
    assert bool(sim.stockout[0])


def _reference_simulation(level: int, demand: list[int], lead: int) -> tuple[int, list[int]]:
    """A plain loop: on hand, backorders and a pipeline list, one series."""
    on_hand, backorder, pipeline, served, trace = level, 0, [0] * lead, 0, []
    for d in demand:
        if lead:
            arriving = pipeline.pop(0)
            on_hand += arriving
            cleared = min(backorder, on_hand)
            backorder -= cleared
            on_hand -= cleared
        position = on_hand - backorder + sum(pipeline)
        order = max(level - position, 0)
        if lead:
            pipeline.append(order)
        else:
            on_hand += order
            cleared = min(backorder, on_hand)
            backorder -= cleared
            on_hand -= cleared
        take = min(d, on_hand)
        served += take
        on_hand -= take
        backorder += d - take
        trace.append(on_hand)
    return served, trace


@pytest.mark.parametrize("lead", [0, 1, 2])
def test_simulator_matches_a_plain_loop(lead: int) -> None:
    rng = np.random.default_rng(lead)
    demand = rng.poisson(rng.uniform(0.2, 4, size=(30, 1)), size=(30, 12))
    levels = rng.integers(0, 12, 30)
    sim = bt.simulate_order_up_to(levels, demand, lead_time=lead)
    for i in range(30):
        served, trace = _reference_simulation(int(levels[i]), demand[i].tolist(), lead)
        assert sim.served[i] == served
        np.testing.assert_array_equal(sim.on_hand[i], trace)


def test_read_wide_and_long_csv(tmp_path: Path) -> None:
    wide = tmp_path / "wide.csv"
    wide.write_text("month,P-1,P-2\n2024-01,2,\n2024-02,0,1\n2024-03,5,0\n")
    t = bt.read_demand_csv(wide)
    assert t.names == ("P-1", "P-2")
    np.testing.assert_array_equal(t.values, [[2, 0, 5], [0, 1, 0]])
    np.testing.assert_array_equal(t.season_pos(), [0, 1, 2])
    long = tmp_path / "long.csv"
    long.write_text("date,part,qty\n2024-01-03,P-2,1\n2024-01-20,P-2,2\n2024-03-31,P-1,4\n")
    t2 = bt.read_demand_csv(long)
    assert t2.names == ("P-1", "P-2")
    np.testing.assert_array_equal(t2.values, [[0, 0, 4], [3, 0, 0]])  # February is a gap
    assert str(t2.periods[1]) == "2024-02-01"


def test_csv_errors_name_row_and_column(tmp_path: Path) -> None:
    bad = tmp_path / "bad.csv"
    bad.write_text("month,P-1\n2024-01,2\n2024-02,lots\n2024-13,1\n")
    with pytest.raises(bt.DemandFileError) as err:
        bt.read_wide_csv(bad)
    msg = str(err.value)
    assert "bad.csv:3:P-1: expected a quantity, got 'lots'" in msg
    assert "bad.csv:4:month" in msg  # both problems reported at once
    other = tmp_path / "other.csv"
    other.write_text("when,what\n1,2\n")
    with pytest.raises(bt.DemandFileError, match="expected a wide file"):
        bt.read_demand_csv(other)


def _m5_rmsse(train: np.ndarray, test: np.ndarray, forecast: np.ndarray) -> float:
    """RMSSE per the M5 guide, series with a zero scale left out, then averaged."""
    vals = []
    for i in range(train.shape[0]):
        scale = np.mean(np.diff(train[i]) ** 2)
        if scale > 0:
            vals.append(np.sqrt(np.mean((test[i] - forecast[i]) ** 2) / scale))
    return float(np.mean(vals))


def _carparts(n: int) -> bt.DemandTable:
    if not CARPARTS.exists():
        pytest.skip(f"{CARPARTS} not found")
    t = bt.read_wide_csv(CARPARTS)
    return bt.DemandTable(t.names[:n], t.periods, t.values[:n], t.freq)


def test_small_backtest_on_carparts() -> None:
    t = _carparts(120)
    assert t.values.shape == (120, 51)
    results = bt.run_backtests(t.values, t.names, fill_rates=(0.90, 0.98),
                               setup=bt.BacktestSetup(horizon=6), season_pos=t.season_pos())
    lo, hi = results
    for r in results:
        d = r.to_dict()
        for key in ("series", "rmsse", "mase", "fill_rate", "avg_on_hand", "seconds"):
            assert key in d
        json.dumps(d)  # JSON-ready
        assert d["series"] == 120
        assert 0.0 <= r.fill_rate <= 1.0
        assert r.seconds > 0
    # more service costs more stock, and the target moves the achieved fill
    assert hi.avg_on_hand > lo.avg_on_hand
    assert hi.fill_rate >= lo.fill_rate
    # the reported pooled fill is served over demanded of an independent re-simulation
    test = t.values[:, -6:]
    sim = bt.simulate_order_up_to(hi.levels, test)
    assert hi.fill_rate == pytest.approx(sim.served.sum() / test.sum())
    # RMSSE as the M5 guide defines it, recomputed from the forecast
    from inventory.forecast import methods as fc

    res = fc.fit_forecast(t.values[:, :-6], season_pos=t.season_pos()[:-6],
                          options=fc.FitOptions(horizon=6))
    assert hi.rmsse == pytest.approx(_m5_rmsse(t.values[:, :-6], test, res.mean(6)), rel=1e-9)


def test_rolling_backtest_on_carparts() -> None:
    t = _carparts(60)
    r = bt.run_rolling_backtest(t.values, t.names, origins=2, fill_rate=0.95,
                                setup=bt.BacktestSetup(horizon=6))
    assert r.origins == (44, 45)
    assert 0.0 < r.fill_rate <= 1.0
    assert r.to_dict()["series"] == 60


def test_backtest_rejects_too_short_history() -> None:
    with pytest.raises(ValueError, match="need more than"):
        bt.run_backtest(np.ones((3, 7)), setup=bt.BacktestSetup(horizon=6))


# -- calibrated fill (issue 14 item 1) -------------------------------------------------------


def test_calibration_inverts_a_known_curve() -> None:
    from inventory.ordering.calibration import curve

    # achieved = asked ** 2 on a grid: to achieve p the policy must be asked sqrt(p)
    # (the inverse of a monotone function; exact at grid points, close between them)
    grid = np.linspace(0.80, 0.999, 60)
    cal = curve(grid, grid**2)
    for p in (0.70, 0.81, 0.9, 0.95):
        assert cal.ask(p) == pytest.approx(np.sqrt(p), abs=2e-3)
    # a dip in the measured curve (simulation noise) never makes the map decreasing
    noisy = curve([0.8, 0.9, 0.95], [0.85, 0.84, 0.93])
    assert noisy.achieved == (0.85, 0.85, 0.93)
    assert noisy.ask(0.9) <= noisy.ask(0.92)


def test_shrunk_calibration_is_the_weighted_log_odds_offset() -> None:
    """Shrinkage toward no correction: in log-odds (scipy.special.logit / expit, the outside
    reference), the rate asked is the promise plus ``weight`` times the offset of the
    inverted curve; weight 0 asks the promise itself, weight 1 the full inversion."""
    from scipy.special import expit, logit

    from inventory.ordering.calibration import curve

    grid = np.linspace(0.80, 0.999, 60)
    full = curve(grid, grid**2)
    for w in (0.0, 0.35, 0.6, 1.0):
        cal = curve(grid, grid**2, weight=w)
        for p in (0.9, 0.95, 0.98):
            offset = logit(full.ask(p)) - logit(p)
            assert cal.ask(p) == pytest.approx(float(expit(logit(p) + w * offset)), rel=1e-9)
    # asked = sqrt(achieved) at the grid's own points: the full offset there is exact
    p = float(grid[30] ** 2)
    assert logit(full.ask(p)) - logit(p) == pytest.approx(logit(grid[30]) - logit(p), abs=1e-6)
    assert curve(grid, grid**2, weight=0.0).ask(0.93) == pytest.approx(0.93, abs=1e-12)


def test_calibration_repairs_a_too_thin_model() -> None:
    """Demand is negative binomial with a variance-to-mean ratio of 2 (drawn with numpy's
    sampler, the oracle), the model believes Poisson: its levels fall short of the asked
    fill. Learned on training months only, the calibration asks for more and the fill on
    fresh months lands near the promise."""
    from inventory.forecast.distributions import poisson
    from inventory.ordering.calibration import learn_fill_calibration
    from inventory.ordering.simulate import policy_levels

    rng = np.random.default_rng(7)
    n, mean, vmr = 3000, 0.8, 2.0
    r = mean / (vmr - 1.0)  # NB with mean m and variance m * vmr: r = m / (vmr - 1)
    y = rng.negative_binomial(r, r / (r + mean), size=(n, 30)).astype(float)
    train, test = y[:, :24], y[:, 24:]

    def fit(history: np.ndarray, end: int):
        return poisson(history.mean(axis=1))

    # stationary demand: the full inversion (weight 1) is the right correction here
    cal = learn_fill_calibration(train, fit, bt.BacktestSetup(horizon=6, lead_time=1,
                                                              review_period=1,
                                                              allocation="uniform",
                                                              calibration_weight=1.0,
                                                              calibration_origins=1))
    assert cal.origins == (18,)
    dist = fit(train, 24)

    def achieved(ask: float) -> float:
        lv = policy_levels(dist, ask, allocation="uniform", lead_time=1, review_period=1)
        sim = bt.simulate_order_up_to(lv, test)
        return float(sim.served.sum() / sim.demand.sum())

    plain = achieved(0.95)
    assert plain < 0.90  # the thin model runs short
    assert cal.ask(0.95) > 0.95
    assert achieved(cal.ask(0.95)) == pytest.approx(0.95, abs=0.01)
    # the default shrinkage asks for less than the full inversion and more than the promise
    half = learn_fill_calibration(train, fit, bt.BacktestSetup(allocation="uniform"))
    assert half.weight == 0.5 and half.origins == (18, 17, 16)  # three inner origins
    assert 0.95 < half.ask(0.95) < cal.ask(0.95)
    assert plain < achieved(half.ask(0.95)) <= achieved(cal.ask(0.95))


def test_rewriting_the_scored_months_changes_no_level() -> None:
    """No leakage: the levels and the calibrated asked rate come from the training months
    only, so rewriting the scored months leaves them identical (and the fill changes)."""
    t = _carparts(150)
    y = t.values.copy()
    setup = bt.BacktestSetup(horizon=6, allocation="uniform")
    a = bt.run_backtests(y, t.names, fill_rates=(0.95,), setup=setup,
                         season_pos=t.season_pos())[0]
    y2 = y.copy()
    y2[:, -6:] = np.random.default_rng(3).poisson(2.0, size=y2[:, -6:].shape)
    b = bt.run_backtests(y2, t.names, fill_rates=(0.95,), setup=setup,
                         season_pos=t.season_pos())[0]
    assert a.fill_calibration and a.fill_calibration == b.fill_calibration
    assert a.asked_policy == b.asked_policy
    assert a.levels is not None and b.levels is not None
    assert np.array_equal(a.levels, b.levels)
    assert a.fill_rate != b.fill_rate


def test_rolling_reports_promised_vs_achieved_per_abc_class() -> None:
    t = _carparts(80)
    r = bt.run_rolling_backtests(t.values, t.names, fill_rates=(0.9,), origins=2,
                                 setup=bt.BacktestSetup(allocation="uniform"),
                                 season_pos=t.season_pos())[0]
    assert set(r.by_abc) <= {"A", "B", "C"} and r.by_abc
    # the per-class units add up to the pooled fill (an independent sum of the parts)
    served = sum(c["served"] for c in r.by_abc.values())
    demanded = sum(c["demanded"] for c in r.by_abc.values())
    assert served / demanded == pytest.approx(r.fill_rate, rel=1e-9)
    assert sum(c["series"] for c in r.by_abc.values()) == 80
