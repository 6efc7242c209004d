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

import csv
import time
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Literal

import numpy as np
from numpy.typing import ArrayLike, NDArray

from inventory.forecast import demand as dm
from inventory.forecast import methods as fc
from inventory.forecast.distributions import DemandDistribution
from inventory.ordering import policy

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


def read_wide_csv(path: str | Path, *, month_column: str = "month") -> DemandTable:
    """A wide monthly CSV: a ``month`` column (YYYY-MM) and one column per part.

    Blank cells are zero demand; every problem is reported with its row and column, all at
    once. Months must be consecutive and increasing.
    """
    p = Path(path)
    with p.open(newline="", encoding="utf-8-sig") as fh:
        rows = list(csv.reader(fh))
    if not rows:
        raise DemandFileError(f"{p}: empty file")
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
    with p.open(newline="", encoding="utf-8-sig") as fh:
        reader = csv.DictReader(fh)
        fields = [f.strip() for f in (reader.fieldnames or [])]
        missing = [c for c in (date_column, part_column, qty_column) if c not in fields]
        if missing:
            raise DemandFileError(f"{p}:1: missing column(s) {missing} (header: {fields})")
        dates: list[np.datetime64] = []
        parts: list[str] = []
        qtys: list[float] = []
        errors: list[str] = []
        for r, row in enumerate(reader, start=2):
            row = {k.strip(): v for k, v in row.items() if k is not None}
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
    with p.open(newline="", encoding="utf-8-sig") as fh:
        header = [h.strip() for h in next(csv.reader(fh), [])]
    if "month" in header:
        return read_wide_csv(p)
    if {"date", "part", "qty"} <= set(header):
        return read_long_csv(p, freq=freq)
    raise DemandFileError(
        f"{p}:1: expected a wide file with a 'month' column or a long file with "
        f"'date', 'part' and 'qty' columns; header is {header[:6]}"
    )


# -- simulation ---------------------------------------------------------------------------


@dataclass(frozen=True)
class Simulation:
    """Per-series outcome of simulating an order-up-to policy over the test periods."""

    demand: FloatArray  # (n,) units demanded
    served: FloatArray  # (n,) units served from the shelf
    on_hand: FloatArray  # (n, h) on hand at the end of each period
    stockout: NDArray[np.bool_]  # (n,) any period with demand not served from the shelf


def simulate_order_up_to(
    levels: ArrayLike,
    demand: ArrayLike,
    *,
    lead_time: int = 1,
    review_period: int = 1,
) -> Simulation:
    """Periodic review, order-up-to ``levels`` (per series, or per series and period),
    backorders, whole units, on hand starting at the first level with nothing on order.

    Each period: receive what was ordered ``lead_time`` periods ago; on a review period
    (every ``review_period``, starting with the first) order up to the level; serve demand
    from the shelf; the rest is backordered.
    """
    d = np.asarray(demand, dtype=float)
    n, h = d.shape
    s = np.asarray(levels, dtype=float)
    s = np.broadcast_to(s[:, None] if s.ndim == 1 else s, (n, h))
    if lead_time < 0 or review_period < 1:
        raise ValueError("lead_time must be >= 0 and review_period >= 1")
    net = s[:, 0].copy()
    pipeline = np.zeros((n, max(lead_time, 1)))
    served = np.zeros(n)
    on_hand = np.zeros((n, h))
    stockout = np.zeros(n, dtype=bool)
    for t in range(h):
        if lead_time > 0:
            net += pipeline[:, 0]
            pipeline[:, :-1] = pipeline[:, 1:]
            pipeline[:, -1] = 0.0
        if t % review_period == 0:
            position = net + pipeline.sum(axis=1) if lead_time > 0 else net
            order = np.maximum(np.ceil(s[:, t] - position), 0.0)
            if lead_time > 0:
                pipeline[:, lead_time - 1] += order
            else:
                net += order
        dt = d[:, t]
        from_shelf = np.minimum(dt, np.maximum(net, 0.0))
        served += from_shelf
        stockout |= from_shelf < dt
        net -= dt
        on_hand[:, t] = np.maximum(net, 0.0)
    return Simulation(d.sum(axis=1), served, on_hand, stockout)


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


def _evaluate(fit: _Fit, train: FloatArray, test: FloatArray, *, fill_rate: float,
              lead_time: int, review_period: int,
              allocation: Literal["part", "uniform", "marginal"]) -> dict[str, Any]:
    """Levels, simulation and every reported measure for one fill target (timed)."""
    t0 = time.perf_counter()
    dist = fit.dist.dist
    if allocation == "part":
        levels = policy.order_up_to_levels(dist, fill_rate, lead_time=lead_time,
                                           review_period=review_period)
    elif allocation == "uniform" or allocation == "marginal":
        levels = policy.pooled_order_up_to_levels(dist, fill_rate, method=allocation,
                                                  lead_time=lead_time, review_period=review_period)
    else:
        raise ValueError("allocation must be 'part', 'uniform' or 'marginal'")
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
    }
    out["seconds"] = time.perf_counter() - t0
    return out


def _summary(fit: _Fit, ev: dict[str, Any], *, n: int, horizon: int, lead_time: int,
             review_period: int, fill_rate: float, origins: tuple[int, ...],
             names: Sequence[str]) -> BacktestResult:
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
        levels=ev["levels"], names=tuple(names),
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
    allocation: Literal["part", "uniform", "marginal"] = "part",
    options: fc.FitOptions | None = None,
) -> list[BacktestResult]:
    """The one-origin protocol for several fill targets sharing one forecast fit.

    ``matrix``: demand ``(series, periods)``; ``season_pos``: calendar month - 1 per column
    (enables the seasonal check); ``allocation``: "part" (each part's smallest level reaching
    the target, :func:`policy.order_up_to_levels`, the default), "uniform" (one per-part
    target for all, set so the expected POOLED fill meets the target) or "marginal" (least
    stock reaching the expected pooled target), both :func:`policy.pooled_order_up_to_levels`.
    Each result's ``seconds`` is the fit time plus that target's levels, simulation and
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
    out = []
    for f in fill_rates:
        ev = _evaluate(fit, train, test, fill_rate=f, lead_time=lead_time,
                       review_period=review_period, allocation=allocation)
        out.append(_summary(fit, ev, n=n, horizon=horizon, lead_time=lead_time,
                            review_period=review_period, fill_rate=f,
                            origins=(t_len - horizon,), names=nm))
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
    allocation: Literal["part", "uniform", "marginal"] = "part",
    options: fc.FitOptions | None = None,
) -> BacktestResult:
    """The headline one-origin protocol (see the module docstring) for one fill target."""
    return run_backtests(
        matrix, names, fill_rates=(fill_rate,), horizon=horizon, lead_time=lead_time,
        review_period=review_period, season_pos=season_pos, allocation=allocation,
        options=options,
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
    allocation: Literal["part", "uniform", "marginal"] = "part",
    options: fc.FitOptions | None = None,
) -> BacktestResult:
    """Rolling-origin mode: the one-origin protocol at ``origins`` origins ``step`` periods
    apart (the last one ``horizon`` periods before the end), each fitted on the data before
    it; fill and on-hand pooled over all origins, accuracy averaged, seconds summed."""
    y = np.asarray(matrix, dtype=float)
    n, t_len = y.shape
    nm = tuple(names) if names is not None else tuple(str(i) for i in range(n))
    ends = [t_len - j * step for j in range(origins)][::-1]
    ends = [e for e in ends if e - horizon > horizon + 2]
    if not ends:
        raise ValueError("series too short for a rolling backtest with these settings")
    pos_all = None if season_pos is None else np.asarray(season_pos, dtype=np.int64)
    served = demanded = on_hand = 0.0
    no_stock: list[float] = []
    acc: dict[str, list[float]] = {k: [] for k in ("rmsse", "mase", "bias", "total")}
    exp_fill: list[float] = []
    seconds = 0.0
    last: BacktestResult | None = None
    for e in ends:
        r = run_backtest(y[:, :e], nm, horizon=horizon, lead_time=lead_time,
                         fill_rate=fill_rate, review_period=review_period,
                         season_pos=None if pos_all is None else pos_all[:e],
                         allocation=allocation, options=options)
        served += r.fill_rate * _units(y[:, e - horizon:e])
        demanded += _units(y[:, e - horizon:e])
        on_hand += r.avg_on_hand
        no_stock.append(r.no_stockout)
        for k, v in (("rmsse", r.rmsse), ("mase", r.mase), ("bias", r.bias),
                     ("total", r.total_error)):
            acc[k].append(v)
        exp_fill.append(r.expected_fill)
        seconds += r.seconds
        last = r
    assert last is not None
    return BacktestResult(
        series=n, horizon=horizon, lead_time=lead_time, review_period=review_period,
        fill_target=fill_rate, rmsse=float(np.nanmean(acc["rmsse"])),
        mase=float(np.nanmean(acc["mase"])), bias=float(np.nanmean(acc["bias"])),
        total_error=float(np.nanmean(acc["total"])),
        fill_rate=served / demanded if demanded > 0 else 1.0,
        expected_fill=float(np.mean(exp_fill)), no_stockout=float(np.mean(no_stock)),
        avg_on_hand=on_hand / len(ends), seconds=seconds,
        origins=tuple(e - horizon for e in ends), class_choice=last.class_choice,
        classes=last.classes, seasonal=last.seasonal, dispersion=last.dispersion,
        names=nm,
    )


def _units(block: FloatArray) -> float:
    return float(np.nansum(block))
