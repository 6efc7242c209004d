"""Backtest of forecast + replenishment policy on a demand history outside the database.

Pure engine (the CSV readers are in :mod:`inventory.ordering.backtest_data`, the result and
the pooling of origins in :mod:`inventory.ordering.backtest_result`, both re-exported). No
database. The order-up-to levels come from the planner's own policy code
(:func:`inventory.ordering.policy.order_up_to_levels`), so the backtest measures what the
planner would do.

Headline protocol (one origin): train on all but the last ``horizon`` periods, fit the
forecast and the demand distribution, set one order-up-to level S per series for the
asked fill rate, then simulate the test periods:

- at the start of each period the order placed ``lead_time`` periods ago arrives;
- every ``review_period`` periods an order brings the inventory position (net stock +
  on order) up to S; whole units;
- demand is served from the shelf as far as stock lasts; the rest is backordered and
  delivered from later receipts (not counted as served from the shelf);
- on hand starts at S with nothing on order.

Reported: RMSSE, MASE, scaled bias and scaled error of the total over the horizon (from
the forecast mean), pooled fill rate (units served from the shelf / units demanded), the
share of series with no stockout, average on-hand units per series per period (end of
period), the expected fill the model promised, the coverage of its quantiles, and the run
time. Rolling-origin mode (:func:`run_rolling_backtest`) repeats the protocol at earlier
origins and pools the results.
"""

from __future__ import annotations

import time
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from inventory.forecast import methods as fc
from inventory.forecast.distributions import DemandDistribution
from inventory.ordering import policy
from inventory.ordering.backtest_data import (  # noqa: F401  (re-exported: one import path)
    DemandFileError,
    DemandTable,
    read_demand_csv,
    read_long_csv,
    read_wide_csv,
)
from inventory.ordering.backtest_result import BacktestResult, pool
from inventory.ordering.calibration import NO_CALIBRATION, FillCalibration, learn_fill_calibration
from inventory.ordering.simulate import (  # noqa: F401  (re-exported: one import path)
    Allocation,
    BacktestSetup,
    Simulation,
    policy_levels,
    simulate_order_up_to,
)
from inventory.stock.valuation import abc_classes

FloatArray = NDArray[np.float64]

CALIBRATION_LEVELS = (0.5, 0.8, 0.9, 0.95, 0.98)
DEFAULT_SETUP = BacktestSetup()


def _mean(x: FloatArray) -> float:
    ok = np.isfinite(x)
    return float(x[ok].mean()) if ok.any() else float("nan")


@dataclass(frozen=True)
class _Fit:
    result: fc.ForecastResult
    dist: fc.DistributionFit
    seconds: float


def _fit(train: FloatArray, season_pos: NDArray[np.int64] | None, setup: BacktestSetup) -> _Fit:
    t0 = time.perf_counter()
    opt = setup.options or fc.FitOptions(horizon=setup.horizon)
    res = fc.fit_forecast(train, season_pos=season_pos, options=opt)
    dist = fc.fit_distribution(train, res, cover=setup.cover, hold=setup.horizon)
    return _Fit(res, dist, time.perf_counter() - t0)


def _calibration(dist: DemandDistribution, path: FloatArray, test: FloatArray, cover: int
                 ) -> dict[str, float]:
    """Share of test windows of ``cover`` periods whose demand was at or below the model's
    p-quantile, for each p in :data:`CALIBRATION_LEVELS` (a calibrated model gives about p
    for continuous demand, at least p for whole units)."""
    n, h = test.shape
    out: dict[str, float] = {}
    if h < cover:
        return out
    assert dist.vmr is not None
    cdfs = []
    for s in range(h - cover + 1):
        mean = path[:, s:s + cover].sum(axis=1)
        d = DemandDistribution("nbinom", mean, vmr=dist.vmr)
        # actual <= the p-quantile (smallest x with F(x) >= p)  <=>  F(actual - 1) < p
        cdfs.append(d.cdf(test[:, s:s + cover].sum(axis=1) - 1.0))
    f = np.concatenate(cdfs)
    for p in CALIBRATION_LEVELS:
        out[f"q{int(round(p * 100))}"] = float(np.mean(f < p - 1e-12))
    return out


def abc_by_units(train: FloatArray, *, months: int = 12) -> list[str]:
    """ABC class of each series by its units over the last ``months`` training periods
    (a demand file has no prices; :func:`inventory.stock.valuation.abc_classes`, 80 / 95 %
    cumulative shares: common practice)."""
    units = np.nansum(train[:, -months:], axis=1)
    return abc_classes([float(u) for u in units])


def _by_abc(classes: Sequence[str], sim: Simulation, dist: DemandDistribution,
            levels: NDArray[np.int64], *, lead_time: int, review_period: int
            ) -> dict[str, dict[str, float]]:
    """Per ABC class: series, units demanded and served, achieved fill, the model's
    expected fill at the levels."""
    cls = np.asarray(classes)
    out: dict[str, dict[str, float]] = {}
    for c in ("A", "B", "C"):
        idx = np.flatnonzero(cls == c)
        if idx.size == 0:
            continue
        demanded = float(sim.demand[idx].sum())
        served = float(sim.served[idx].sum())
        out[c] = {"series": float(idx.size), "demanded": demanded, "served": served,
                  "fill": served / demanded if demanded > 0 else float("nan"),
                  "expected": policy.expected_fill(dist.take(idx), levels[idx],
                                                   lead_time=lead_time,
                                                   review_period=review_period)}
    return out


def _evaluate(fit: _Fit, train: FloatArray, test: FloatArray, fill_rate: float,
              setup: BacktestSetup, fill_cal: FillCalibration = NO_CALIBRATION) -> dict[str, Any]:
    """Levels, simulation and every reported measure for one fill target (timed). With a
    calibration the policy is asked for the rate that achieved ``fill_rate`` inside the
    training months."""
    t0 = time.perf_counter()
    dist = fit.dist.dist
    lt, rp = setup.lead_time, setup.review_period
    ask = fill_cal.ask(fill_rate)
    levels = policy_levels(dist, ask, allocation=setup.allocation, lead_time=lt,
                           review_period=rp)
    sim = simulate_order_up_to(levels, test, lead_time=lt, review_period=rp)
    h = test.shape[1]
    path = fit.result.mean(h)
    out = {
        "levels": levels,
        "sim": sim,
        "rmsse": fc.rmsse(test, path, train),
        "mase": fc.mase(test, path, train),
        "bias": fc.scaled_bias(test, path, train),
        "total": fc.scaled_total_error(test, path, train),
        "expected_fill": policy.expected_fill(dist, levels, lead_time=lt, review_period=rp),
        "calibration": _calibration(dist, path, test, setup.cover),
        "ask": ask,
        "by_abc": _by_abc(abc_by_units(train), sim, dist, levels, lead_time=lt,
                          review_period=rp),
    }
    out["seconds"] = time.perf_counter() - t0
    return out


def _summary(fit: _Fit, ev: dict[str, Any], fill_rate: float, setup: BacktestSetup,
             where: tuple[tuple[int, ...], tuple[str, ...]], fill_cal: FillCalibration
             ) -> BacktestResult:
    """One target's result; ``where``: (origins, series names)."""
    origins, names = where
    n = len(names)
    sim: Simulation = ev["sim"]
    demanded = float(sim.demand.sum())
    labels = fit.result.classification.label
    return BacktestResult(
        series=n, horizon=setup.horizon, lead_time=setup.lead_time,
        review_period=setup.review_period, fill_target=fill_rate,
        rmsse=_mean(ev["rmsse"]), mase=_mean(ev["mase"]), bias=_mean(ev["bias"]),
        total_error=_mean(ev["total"]),
        fill_rate=float(sim.served.sum() / demanded) if demanded > 0 else 1.0,
        expected_fill=float(ev["expected_fill"]),
        no_stockout=float(1.0 - sim.stockout.mean()) if n else 1.0,
        avg_on_hand=float(sim.on_hand.mean()) if n else 0.0,
        seconds=fit.seconds + ev["seconds"],
        origins=origins, calibration=ev["calibration"],
        class_choice=dict(fit.result.class_choice),
        classes={str(c): int((labels == c).sum()) for c in np.unique(labels)},
        seasonal=fit.result.seasonal,
        dispersion={"a": dict(fit.dist.a), "b": dict(fit.dist.b),
                    "cold": {"rate": fit.dist.cold_rate, "vmr": fit.dist.cold_vmr}},
        levels=ev["levels"], names=tuple(names), asked_policy=float(ev["ask"]),
        fill_calibration=fill_cal.to_dict() if fill_cal.asked else {},
        by_abc=ev["by_abc"],
    )


def run_backtests(
    matrix: ArrayLike,
    names: Sequence[str] | None = None,
    *,
    fill_rates: Sequence[float] = (0.95,),
    setup: BacktestSetup = DEFAULT_SETUP,
    season_pos: ArrayLike | None = None,
) -> list[BacktestResult]:
    """The one-origin protocol for several fill targets sharing one forecast fit.

    ``matrix``: demand ``(series, periods)``; ``season_pos``: calendar month - 1 per column
    (enables the seasonal check); ``setup`` (:class:`BacktestSetup`): horizon, lead time,
    review period, the allocation ("part": each part's smallest level reaching the target,
    :func:`policy.order_up_to_levels`; "uniform", the default: one per-part target for all,
    set so the expected POOLED fill meets the target; "marginal": least stock reaching the
    expected pooled target, both :func:`policy.pooled_order_up_to_levels`), the forecast
    options, and the calibration: learn the asked-to-achieved fill curve inside the
    training months (:mod:`inventory.ordering.calibration`) and ask the policy for the rate
    that delivered each target there; ``fill_target`` stays the promised rate,
    ``asked_policy`` is what the policy was given. Each result's ``seconds`` is the fit time
    (calibration included) plus that target's levels, simulation and measures.
    """
    y = np.asarray(matrix, dtype=float)
    if y.ndim != 2:
        raise ValueError("matrix must be (series, periods)")
    n, t_len = y.shape
    horizon = setup.horizon
    if horizon < 1 or t_len <= horizon + 2:
        raise ValueError(f"need more than horizon + 2 = {horizon + 2} periods, got {t_len}")
    nm = tuple(names) if names is not None else tuple(str(i) for i in range(n))
    train, test = y[:, :-horizon], np.nan_to_num(y[:, -horizon:])
    pos = None if season_pos is None else np.asarray(season_pos, dtype=np.int64)[:-horizon]
    fit = _fit(train, pos, setup)
    fill_cal = NO_CALIBRATION
    if setup.calibrate:
        t0 = time.perf_counter()

        def inner(history: FloatArray, end: int) -> DemandDistribution:
            return _fit(history, None if pos is None else pos[:end], setup).dist.dist

        fill_cal = learn_fill_calibration(train, inner, setup)
        fit = _Fit(fit.result, fit.dist, fit.seconds + time.perf_counter() - t0)
    out = []
    for f in fill_rates:
        ev = _evaluate(fit, train, test, f, setup, fill_cal)
        out.append(_summary(fit, ev, f, setup, ((t_len - horizon,), nm), fill_cal))
    return out


def run_backtest(
    matrix: ArrayLike,
    names: Sequence[str] | None = None,
    *,
    fill_rate: float = 0.95,
    setup: BacktestSetup = DEFAULT_SETUP,
    season_pos: ArrayLike | None = None,
) -> BacktestResult:
    """The headline one-origin protocol (see the module docstring) for one fill target."""
    return run_backtests(matrix, names, fill_rates=(fill_rate,), setup=setup,
                         season_pos=season_pos)[0]


def run_rolling_backtest(
    matrix: ArrayLike,
    names: Sequence[str] | None = None,
    *,
    fill_rate: float = 0.95,
    origins: int = 3,
    step: int = 1,
    setup: BacktestSetup = DEFAULT_SETUP,
    season_pos: ArrayLike | None = None,
) -> BacktestResult:
    """Rolling-origin mode for one fill target (:func:`run_rolling_backtests`)."""
    return run_rolling_backtests(matrix, names, fill_rates=(fill_rate,), origins=origins,
                                 step=step, setup=setup, season_pos=season_pos)[0]


def run_rolling_backtests(
    matrix: ArrayLike,
    names: Sequence[str] | None = None,
    *,
    fill_rates: Sequence[float] = (0.95,),
    origins: int = 3,
    step: int = 1,
    setup: BacktestSetup = DEFAULT_SETUP,
    season_pos: ArrayLike | None = None,
) -> list[BacktestResult]:
    """Rolling-origin mode: the one-origin protocol at ``origins`` origins ``step`` periods
    apart (the last one ``horizon`` periods before the end), each fitted (and calibrated)
    on the data before it; fill, on-hand and the per-ABC-class fill pooled over all
    origins, accuracy averaged, seconds summed. One result per fill target, the fits
    shared."""
    y = np.asarray(matrix, dtype=float)
    n, t_len = y.shape
    horizon = setup.horizon
    nm = tuple(names) if names is not None else tuple(str(i) for i in range(n))
    ends = [t_len - j * step for j in range(origins)][::-1]
    ends = [e for e in ends if e - horizon > horizon + 2]
    if not ends:
        raise ValueError("series too short for a rolling backtest with these settings")
    pos_all = None if season_pos is None else np.asarray(season_pos, dtype=np.int64)
    per_origin = [
        run_backtests(y[:, :e], nm, fill_rates=fill_rates, setup=setup,
                      season_pos=None if pos_all is None else pos_all[:e])
        for e in ends
    ]
    return [pool([rs[i] for rs in per_origin], [y[:, e - horizon:e] for e in ends], nm,
                 tuple(e - horizon for e in ends)) for i in range(len(fill_rates))]
