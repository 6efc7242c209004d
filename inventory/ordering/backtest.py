"""Backtest of forecast + replenishment policy on a demand history outside the database.

Pure engine plus two CSV readers (a wide file: a ``month`` column and one column per
part, like ../shared/data/carparts_dev.csv; or a long file: date, part, qty). No
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
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Literal

import numpy as np
from numpy.typing import ArrayLike, NDArray

from inventory.core.choices import DEFAULT_ALLOCATION
from inventory.core.errors import InventoryError
from inventory.forecast import demand as dm
from inventory.forecast import methods as fc
from inventory.forecast.distributions import DemandDistribution
from inventory.ordering import policy
from inventory.ordering.calibration import NO_CALIBRATION, FillCalibration, learn_fill_calibration
from inventory.ordering.simulate import (  # noqa: F401  (re-exported: one import path)
    Allocation,
    Simulation,
    policy_levels,
    simulate_order_up_to,
)
from inventory.stock.valuation import abc_classes

FloatArray = NDArray[np.float64]

CALIBRATION_LEVELS = (0.5, 0.8, 0.9, 0.95, 0.98)


# -- reading demand histories ---------------------------------------------------------------


@dataclass(frozen=True)
class DemandTable:
    """Demand per series and period read from a file: ``values[i, t]`` for ``names[i]``,
    period starts in ``periods`` (datetime64[D])."""

    names: tuple[str, ...]
    periods: NDArray[np.datetime64]
    values: FloatArray
    freq: dm.Freq = "M"

    def season_pos(self) -> NDArray[np.int64] | None:
        """Calendar month - 1 of each column for monthly data; None otherwise."""
        if self.freq != "M":
            return None
        months = self.periods.astype("datetime64[M]").astype(np.int64)
        return (months % 12).astype(np.int64)


class DemandFileError(ValueError):
    """A demand file that cannot be read; the message names file, row and column."""


def _parse_month(text: str, where: str) -> np.datetime64:
    t = text.strip()
    try:
        if len(t) == 7:  # YYYY-MM
            return np.datetime64(t, "M").astype("datetime64[D]")
        return np.datetime64(t, "D").astype("datetime64[M]").astype("datetime64[D]")
    except ValueError as exc:
        raise DemandFileError(f"{where}: expected a month (YYYY-MM or a date), got {text!r}") from exc


def _parse_qty(text: str, where: str) -> float:
    t = text.strip()
    if t == "":
        return 0.0  # a gap is no demand
    try:
        q = float(t)
    except ValueError as exc:
        raise DemandFileError(f"{where}: expected a quantity, got {text!r}") from exc
    if not np.isfinite(q) or q < 0:
        raise DemandFileError(f"{where}: quantities must be zero or more, got {text!r}")
    return q


def _csv_rows(p: Path) -> list[list[str]]:
    """The lines of a demand file through the project's one csv reader
    (:func:`inventory.sheets.csvread.csv_grid`: UTF-8, UTF-16 or Windows-1252; comma, semicolon
    or tab), its problems as :class:`DemandFileError`."""
    from inventory.sheets.csvread import csv_grid

    try:
        rows, _ = csv_grid(p)
    except InventoryError as exc:
        raise DemandFileError(str(exc)) from None
    if not rows:
        raise DemandFileError(f"{p}: empty file")
    return rows


def read_wide_csv(path: str | Path, *, month_column: str = "month") -> DemandTable:
    """A wide monthly CSV: a ``month`` column (YYYY-MM) and one column per part.

    Blank cells are zero demand; every problem is reported with its row and column, all at
    once. Months must be consecutive and increasing.
    """
    p = Path(path)
    rows = _csv_rows(p)
    header = [h.strip() for h in rows[0]]
    if month_column not in header:
        raise DemandFileError(f"{p}:1: no {month_column!r} column (header: {header[:5]}...)")
    mcol = header.index(month_column)
    parts = [h for i, h in enumerate(header) if i != mcol]
    pcols = [i for i in range(len(header)) if i != mcol]
    if len(set(parts)) != len(parts):
        raise DemandFileError(f"{p}:1: duplicate part columns")
    errors: list[str] = []
    months: list[np.datetime64] = []
    values = np.zeros((len(parts), len(rows) - 1))
    for r, row in enumerate(rows[1:], start=2):
        if len(row) != len(header):
            errors.append(f"{p}:{r}: expected {len(header)} cells, got {len(row)}")
            continue
        try:
            months.append(_parse_month(row[mcol], f"{p}:{r}:{month_column}"))
        except DemandFileError as exc:
            errors.append(str(exc))
        for j, c in enumerate(pcols):
            try:
                values[j, r - 2] = _parse_qty(row[c], f"{p}:{r}:{header[c]}")
            except DemandFileError as exc:
                errors.append(str(exc))
    if not errors and months:
        m = np.array(months).astype("datetime64[M]").astype(np.int64)
        if np.any(np.diff(m) != 1):
            errors.append(f"{p}: months must be consecutive and increasing")
    if errors:
        more = f" (and {len(errors) - 20} more)" if len(errors) > 20 else ""
        raise DemandFileError("\n".join(errors[:20]) + more)
    return DemandTable(tuple(parts), np.array(months, dtype="datetime64[D]"), values, "M")


def read_long_csv(
    path: str | Path,
    *,
    date_column: str = "date",
    part_column: str = "part",
    qty_column: str = "qty",
    freq: dm.Freq = "M",
) -> DemandTable:
    """A long CSV, one line per demand (date, part, qty), bucketed by calendar month (or
    ISO week with ``freq="W"``) over the whole date range; missing periods are zeros."""
    p = Path(path)
    grid = _csv_rows(p)
    fields = [f.strip() for f in grid[0]]
    missing = [c for c in (date_column, part_column, qty_column) if c not in fields]
    if missing:
        raise DemandFileError(f"{p}:1: missing column(s) {missing} (header: {fields})")
    dates: list[np.datetime64] = []
    parts: list[str] = []
    qtys: list[float] = []
    errors: list[str] = []
    for r, cells in enumerate(grid[1:], start=2):
        if not cells:
            continue  # a blank line
        # a short line leaves its last fields None (as a dictionary reader does), so a missing
        # date is reported rather than read as no date
        row: dict[str, str | None] = dict(zip(fields, [*cells, *[None] * len(fields)],
                                              strict=False))
        try:
            dates.append(np.datetime64(row[date_column].strip(), "D"))
        except (ValueError, AttributeError):
            errors.append(f"{p}:{r}:{date_column}: expected a date, got {row[date_column]!r}")
            continue
        part = (row[part_column] or "").strip()
        if not part:
            errors.append(f"{p}:{r}:{part_column}: empty part")
            dates.pop()
            continue
        try:
            qtys.append(_parse_qty(row[qty_column] or "", f"{p}:{r}:{qty_column}"))
        except DemandFileError as exc:
            errors.append(str(exc))
            dates.pop()
            continue
        parts.append(part)
    if errors:
        more = f" (and {len(errors) - 20} more)" if len(errors) > 20 else ""
        raise DemandFileError("\n".join(errors[:20]) + more)
    if not dates:
        raise DemandFileError(f"{p}: no demand lines")
    names = tuple(sorted(set(parts)))
    index = {n: i for i, n in enumerate(names)}
    mat = dm.bucket_demand(
        np.array(dates), np.array([index[x] for x in parts]), np.array(qtys),
        n_series=len(names), freq=freq,
    )
    return DemandTable(names, mat.periods, mat.values, freq)


def read_demand_csv(path: str | Path, *, freq: dm.Freq = "M") -> DemandTable:
    """Wide if the header has a ``month`` column, long if it has date, part and qty."""
    p = Path(path)
    header = [h.strip() for h in _csv_rows(p)[0]]
    if "month" in header:
        return read_wide_csv(p)
    if {"date", "part", "qty"} <= set(header):
        return read_long_csv(p, freq=freq)
    raise DemandFileError(
        f"{p}:1: expected a wide file with a 'month' column or a long file with "
        f"'date', 'part' and 'qty' columns; header is {header[:6]}"
    )


# -- the backtest ------------------------------------------------------------------------------


@dataclass(frozen=True)
class BacktestResult:
    """Summary of one backtest (one origin, or pooled over rolling origins)."""

    series: int
    horizon: int
    lead_time: int
    review_period: int
    fill_target: float
    rmsse: float
    mase: float
    bias: float
    total_error: float
    fill_rate: float
    expected_fill: float
    no_stockout: float
    avg_on_hand: float
    seconds: float
    origins: tuple[int, ...] = ()
    calibration: dict[str, float] = field(default_factory=dict)
    class_choice: dict[str, str] = field(default_factory=dict)
    classes: dict[str, int] = field(default_factory=dict)
    seasonal: bool = False
    dispersion: dict[str, dict[str, float]] = field(default_factory=dict)
    levels: NDArray[np.int64] | None = None
    names: tuple[str, ...] = ()
    asked_policy: float = float("nan")
    fill_calibration: dict[str, Any] = field(default_factory=dict)
    by_abc: dict[str, dict[str, float]] = field(default_factory=dict)

    def to_dict(self) -> dict[str, Any]:
        """Plain JSON-ready summary (no per-series arrays)."""
        return {
            "series": self.series,
            "horizon": self.horizon,
            "lead_time": self.lead_time,
            "review_period": self.review_period,
            "fill_target": self.fill_target,
            "rmsse": _r(self.rmsse),
            "mase": _r(self.mase),
            "bias": _r(self.bias),
            "total_error": _r(self.total_error),
            "fill_rate": _r(self.fill_rate),
            "expected_fill": _r(self.expected_fill),
            "no_stockout": _r(self.no_stockout),
            "avg_on_hand": _r(self.avg_on_hand),
            "seconds": _r(self.seconds),
            "origins": list(self.origins),
            "calibration": {k: _r(v) for k, v in self.calibration.items()},
            "class_choice": dict(self.class_choice),
            "classes": dict(self.classes),
            "seasonal": self.seasonal,
            "dispersion": {k: {c: _r(x) for c, x in v.items()} for k, v in self.dispersion.items()},
            "asked_policy": _r(self.asked_policy),
            "fill_calibration": dict(self.fill_calibration),
            "by_abc": {k: {c: _r(x) for c, x in v.items()} for k, v in self.by_abc.items()},
        }


def _r(x: float) -> float | None:
    return None if not np.isfinite(x) else round(float(x), 6)


def _mean(x: FloatArray) -> float:
    ok = np.isfinite(x)
    return float(x[ok].mean()) if ok.any() else float("nan")


@dataclass(frozen=True)
class _Fit:
    result: fc.ForecastResult
    dist: fc.DistributionFit
    seconds: float


def _fit(train: FloatArray, season_pos: NDArray[np.int64] | None, horizon: int, lead_time: int,
         review_period: int, options: fc.FitOptions | None) -> _Fit:
    t0 = time.perf_counter()
    opt = options or fc.FitOptions(horizon=horizon)
    res = fc.fit_forecast(train, season_pos=season_pos, options=opt)
    dist = fc.fit_distribution(train, res, cover=lead_time + review_period, hold=horizon)
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


def _evaluate(fit: _Fit, train: FloatArray, test: FloatArray, *, fill_rate: float,
              lead_time: int, review_period: int, allocation: Allocation,
              fill_cal: FillCalibration = NO_CALIBRATION) -> dict[str, Any]:
    """Levels, simulation and every reported measure for one fill target (timed). With a
    calibration the policy is asked for the rate that achieved ``fill_rate`` inside the
    training months."""
    t0 = time.perf_counter()
    dist = fit.dist.dist
    ask = fill_cal.ask(fill_rate)
    levels = policy_levels(dist, ask, allocation=allocation, lead_time=lead_time,
                           review_period=review_period)
    sim = simulate_order_up_to(levels, test, lead_time=lead_time, review_period=review_period)
    h = test.shape[1]
    path = fit.result.mean(h)
    out = {
        "levels": levels,
        "sim": sim,
        "rmsse": fc.rmsse(test, path, train),
        "mase": fc.mase(test, path, train),
        "bias": fc.scaled_bias(test, path, train),
        "total": fc.scaled_total_error(test, path, train),
        "expected_fill": policy.expected_fill(dist, levels, lead_time=lead_time,
                                              review_period=review_period),
        "calibration": _calibration(dist, path, test, lead_time + review_period),
        "ask": ask,
        "by_abc": _by_abc(abc_by_units(train), sim, dist, levels, lead_time=lead_time,
                          review_period=review_period),
    }
    out["seconds"] = time.perf_counter() - t0
    return out


def _summary(fit: _Fit, ev: dict[str, Any], *, n: int, horizon: int, lead_time: int,
             review_period: int, fill_rate: float, origins: tuple[int, ...],
             names: Sequence[str], fill_cal: FillCalibration) -> BacktestResult:
    sim: Simulation = ev["sim"]
    demanded = float(sim.demand.sum())
    labels = fit.result.classification.label
    return BacktestResult(
        series=n, horizon=horizon, lead_time=lead_time, review_period=review_period,
        fill_target=fill_rate,
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
    horizon: int = 6,
    lead_time: int = 1,
    review_period: int = 1,
    season_pos: ArrayLike | None = None,
    allocation: Literal["part", "uniform", "marginal"] = DEFAULT_ALLOCATION,
    options: fc.FitOptions | None = None,
    calibrate: bool = True,
    calibration_origins: int = 1,
) -> list[BacktestResult]:
    """The one-origin protocol for several fill targets sharing one forecast fit.

    ``matrix``: demand ``(series, periods)``; ``season_pos``: calendar month - 1 per column
    (enables the seasonal check); ``allocation``: "part" (each part's smallest level reaching
    the target, :func:`policy.order_up_to_levels`, the default), "uniform" (one per-part
    target for all, set so the expected POOLED fill meets the target) or "marginal" (least
    stock reaching the expected pooled target), both :func:`policy.pooled_order_up_to_levels`.
    ``calibrate``: learn the asked-to-achieved fill curve inside the training months
    (:mod:`inventory.ordering.calibration`, ``calibration_origins`` inner origins) and ask
    the policy for the rate that delivered each target there; ``fill_target`` stays the
    promised rate, ``asked_policy`` is what the policy was given. Each result's ``seconds``
    is the fit time (calibration included) plus that target's levels, simulation and
    measures.
    """
    y = np.asarray(matrix, dtype=float)
    if y.ndim != 2:
        raise ValueError("matrix must be (series, periods)")
    n, t_len = y.shape
    if horizon < 1 or t_len <= horizon + 2:
        raise ValueError(f"need more than horizon + 2 = {horizon + 2} periods, got {t_len}")
    nm = tuple(names) if names is not None else tuple(str(i) for i in range(n))
    train, test = y[:, :-horizon], np.nan_to_num(y[:, -horizon:])
    pos = None if season_pos is None else np.asarray(season_pos, dtype=np.int64)[:-horizon]
    fit = _fit(train, pos, horizon, lead_time, review_period, options)
    fill_cal = NO_CALIBRATION
    if calibrate:
        t0 = time.perf_counter()

        def inner(history: FloatArray, end: int) -> DemandDistribution:
            return _fit(history, None if pos is None else pos[:end], horizon, lead_time,
                        review_period, options).dist.dist

        fill_cal = learn_fill_calibration(train, inner, horizon=horizon, lead_time=lead_time,
                                          review_period=review_period, allocation=allocation,
                                          origins=calibration_origins)
        fit = _Fit(fit.result, fit.dist, fit.seconds + time.perf_counter() - t0)
    out = []
    for f in fill_rates:
        ev = _evaluate(fit, train, test, fill_rate=f, lead_time=lead_time,
                       review_period=review_period, allocation=allocation, fill_cal=fill_cal)
        out.append(_summary(fit, ev, n=n, horizon=horizon, lead_time=lead_time,
                            review_period=review_period, fill_rate=f,
                            origins=(t_len - horizon,), names=nm, fill_cal=fill_cal))
    return out


def run_backtest(
    matrix: ArrayLike,
    names: Sequence[str] | None = None,
    *,
    horizon: int = 6,
    lead_time: int = 1,
    fill_rate: float = 0.95,
    review_period: int = 1,
    season_pos: ArrayLike | None = None,
    allocation: Literal["part", "uniform", "marginal"] = DEFAULT_ALLOCATION,
    options: fc.FitOptions | None = None,
    calibrate: bool = True,
) -> BacktestResult:
    """The headline one-origin protocol (see the module docstring) for one fill target."""
    return run_backtests(
        matrix, names, fill_rates=(fill_rate,), horizon=horizon, lead_time=lead_time,
        review_period=review_period, season_pos=season_pos, allocation=allocation,
        options=options, calibrate=calibrate,
    )[0]


def run_rolling_backtest(
    matrix: ArrayLike,
    names: Sequence[str] | None = None,
    *,
    origins: int = 3,
    step: int = 1,
    horizon: int = 6,
    lead_time: int = 1,
    fill_rate: float = 0.95,
    review_period: int = 1,
    season_pos: ArrayLike | None = None,
    allocation: Literal["part", "uniform", "marginal"] = DEFAULT_ALLOCATION,
    options: fc.FitOptions | None = None,
    calibrate: bool = True,
) -> BacktestResult:
    """Rolling-origin mode for one fill target (:func:`run_rolling_backtests`)."""
    return run_rolling_backtests(
        matrix, names, fill_rates=(fill_rate,), origins=origins, step=step, horizon=horizon,
        lead_time=lead_time, review_period=review_period, season_pos=season_pos,
        allocation=allocation, options=options, calibrate=calibrate,
    )[0]


def run_rolling_backtests(
    matrix: ArrayLike,
    names: Sequence[str] | None = None,
    *,
    fill_rates: Sequence[float] = (0.95,),
    origins: int = 3,
    step: int = 1,
    horizon: int = 6,
    lead_time: int = 1,
    review_period: int = 1,
    season_pos: ArrayLike | None = None,
    allocation: Literal["part", "uniform", "marginal"] = DEFAULT_ALLOCATION,
    options: fc.FitOptions | None = None,
    calibrate: bool = True,
) -> list[BacktestResult]:
    """Rolling-origin mode: the one-origin protocol at ``origins`` origins ``step`` periods
    apart (the last one ``horizon`` periods before the end), each fitted (and calibrated)
    on the data before it; fill, on-hand and the per-ABC-class fill pooled over all
    origins, accuracy averaged, seconds summed. One result per fill target, the fits
    shared."""
    y = np.asarray(matrix, dtype=float)
    n, t_len = y.shape
    nm = tuple(names) if names is not None else tuple(str(i) for i in range(n))
    ends = [t_len - j * step for j in range(origins)][::-1]
    ends = [e for e in ends if e - horizon > horizon + 2]
    if not ends:
        raise ValueError("series too short for a rolling backtest with these settings")
    pos_all = None if season_pos is None else np.asarray(season_pos, dtype=np.int64)
    per_origin = [
        run_backtests(y[:, :e], nm, fill_rates=fill_rates, horizon=horizon,
                      lead_time=lead_time, review_period=review_period,
                      season_pos=None if pos_all is None else pos_all[:e],
                      allocation=allocation, options=options, calibrate=calibrate)
        for e in ends
    ]
    return [_pool([rs[i] for rs in per_origin], [y[:, e - horizon:e] for e in ends], nm,
                  tuple(e - horizon for e in ends)) for i in range(len(fill_rates))]


def _pool(runs: Sequence[BacktestResult], tests: Sequence[FloatArray], names: tuple[str, ...],
          origins: tuple[int, ...]) -> BacktestResult:
    """One result from the same fill target at several origins."""
    demanded = sum(_units(t) for t in tests)
    served = sum(r.fill_rate * _units(t) for r, t in zip(runs, tests, strict=True))
    by_abc: dict[str, dict[str, float]] = {}
    for r in runs:
        for c, row in r.by_abc.items():
            acc = by_abc.setdefault(c, {"series": 0.0, "demanded": 0.0, "served": 0.0,
                                        "expected_sum": 0.0, "origins": 0.0})
            acc["series"] = row["series"]  # classes of the latest origin
            acc["demanded"] += row["demanded"]
            acc["served"] += row["served"]
            acc["expected_sum"] += row["expected"]
            acc["origins"] += 1
    for acc in by_abc.values():
        acc["fill"] = acc["served"] / acc["demanded"] if acc["demanded"] > 0 else float("nan")
        acc["expected"] = acc.pop("expected_sum") / acc.pop("origins")
    last = runs[-1]

    def mean(key: str) -> float:
        return float(np.nanmean([getattr(r, key) for r in runs]))

    return BacktestResult(
        series=last.series, horizon=last.horizon, lead_time=last.lead_time,
        review_period=last.review_period, fill_target=last.fill_target,
        rmsse=mean("rmsse"), mase=mean("mase"), bias=mean("bias"),
        total_error=mean("total_error"),
        fill_rate=served / demanded if demanded > 0 else 1.0,
        expected_fill=mean("expected_fill"), no_stockout=mean("no_stockout"),
        avg_on_hand=mean("avg_on_hand"), seconds=float(sum(r.seconds for r in runs)),
        origins=origins, class_choice=last.class_choice, classes=last.classes,
        seasonal=last.seasonal, dispersion=last.dispersion, names=names,
        asked_policy=mean("asked_policy"), fill_calibration=last.fill_calibration,
        by_abc=by_abc,
    )


def _units(block: FloatArray) -> float:
    return float(np.nansum(block))
