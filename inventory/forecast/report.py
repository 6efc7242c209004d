"""The forecast's plain records: per series (:class:`SeriesForecast`), the season and the
installed-base signal, the whole report (:class:`ForecastReport`, what the faces render) and
the arrays the planner takes (:class:`DemandOutlook`)."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field
from datetime import date
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from inventory.core.errors import InventoryError
from inventory.forecast import methods as fc
from inventory.forecast.distributions import DemandDistribution, negative_binomial

FloatArray = NDArray[np.float64]

#: the demand pattern (Syntetos-Boylan-Croston class) as a manager reads it
PLAIN_CLASS = {
    "smooth": "smoothed, steady",
    "erratic": "smoothed, steady but uneven sizes",
    "intermittent": "smoothed, intermittent",
    "lumpy": "smoothed, intermittent and uneven sizes",
    "no demand": "not sold yet: the rate of new parts",
}


@dataclass(frozen=True)
class SeriesForecast:
    """One series: what it is, its history and forecast per period with a 10-90 % range,
    and its demand over lead time + review (mean and 10/50/90 % quantiles, whole units).
    ``ib_weight``: the installed base's weight in the first forecast periods (its class's).
    ``usage_value``: the last 12 months' demand times the unit cost (jobs for families), to
    rank series."""

    code: str
    kind: str
    cls: str
    method: str
    unit_cost: float | None
    usage_value: float
    history: tuple[float | None, ...]
    forecast: tuple[float, ...]
    low: tuple[int, ...]
    high: tuple[int, ...]
    cover_mean: float
    cover_low: int
    cover_median: int
    cover_high: int
    ib_weight: float = 0.0
    unit: str = "each"

    @property
    def label(self) -> str:
        """The technical method, with the installed-base weight when it was blended in."""
        return self.method + (f" +IB {self.ib_weight:.1f}" if self.ib_weight > 0 else "")

    @property
    def phrase(self) -> str:
        """The method in a manager's words: how the demand was smoothed, what its pattern
        is, and whether the forks due back for service fed it."""
        words = PLAIN_CLASS.get(self.cls, f"smoothed, {self.cls}")
        if self.ib_weight > 0.5 + 1e-9:
            words += ", mostly from forks due back"
        elif self.ib_weight >= 0.5 - 1e-9:
            words += ", half from forks due back"
        elif self.ib_weight > 0:
            words += ", partly from forks due back"
        return words

    def to_dict(self) -> dict[str, Any]:
        return {
            "code": self.code, "kind": self.kind, "unit": self.unit, "class": self.cls,
            "method": self.method, "method_phrase": self.phrase,
            "installed_base_weight": self.ib_weight,
            "unit_cost": self.unit_cost, "usage_value": round(self.usage_value, 2),
            "history": list(self.history), "forecast": [round(x, 3) for x in self.forecast],
            "low": list(self.low), "high": list(self.high),
            "cover": {"mean": round(self.cover_mean, 3), "low": self.cover_low,
                      "median": self.cover_median, "high": self.cover_high},
        }


@dataclass(frozen=True)
class SeasonInfo:
    """The seasonal profile (index per calendar month, mean 1) and whether it was used."""

    used: bool
    profile: tuple[float, ...]
    reason: str
    rmsse_plain: float = float("nan")
    rmsse_seasonal: float = float("nan")

    def to_dict(self) -> dict[str, Any]:
        return {"used": self.used, "profile": [round(x, 3) for x in self.profile],
                "reason": self.reason, "rmsse_plain": _r(self.rmsse_plain),
                "rmsse_seasonal": _r(self.rmsse_seasonal)}


@dataclass(frozen=True)
class InstalledBaseInfo:
    """The installed-base signal: its blend weight (``weight`` pooled over all series,
    ``class_weights`` per SBC class where a class has enough series), why, and what the
    return model found."""

    weight: float
    reason: str
    rmsse_ts: float
    rmsse_ib: float
    rmsse_blend: float
    origins: int
    return_probability: float
    hours_per_week: float
    forks: int
    lag_pmf: dict[int, float]
    fallback: bool
    intervals: dict[str, Any] = field(default_factory=dict)
    class_weights: dict[str, float] = field(default_factory=dict)

    def to_dict(self) -> dict[str, Any]:
        return {"weight": self.weight, "reason": self.reason, "rmsse_ts": _r(self.rmsse_ts),
                "rmsse_installed_base": _r(self.rmsse_ib), "rmsse_blend": _r(self.rmsse_blend),
                "origins": self.origins, "return_probability": _r(self.return_probability),
                "hours_per_week": _r(self.hours_per_week), "forks": self.forks,
                "lag_pmf": {str(k): round(v, 4) for k, v in self.lag_pmf.items()},
                "fallback": self.fallback, "intervals": self.intervals,
                "class_weights": dict(self.class_weights)}


@dataclass(frozen=True)
class ForecastReport:
    """The forecast of every series of one kind, as plain records."""

    today: date
    by: str
    freq: str
    horizon: int
    history_periods: tuple[date, ...]
    forecast_periods: tuple[date, ...]
    lead_time_months: float
    review_months: float
    cover_periods: float
    quantiles: tuple[float, float]
    series: tuple[SeriesForecast, ...]
    season: SeasonInfo
    installed_base: InstalledBaseInfo | None
    class_choice: dict[str, str]
    seconds: float

    def chosen(self, top: int, codes: Sequence[str] = ()) -> list[SeriesForecast]:
        """The ``top`` series by usage value (those with some), then any named in
        ``codes`` (unknown codes raise :class:`InventoryError`)."""
        ranked = sorted(self.series, key=lambda s: (-s.usage_value, s.code))
        out = [s for s in ranked if s.usage_value > 0][:max(top, 0)]
        by_code = {s.code: s for s in self.series}
        missing = [c for c in codes if c not in by_code]
        if missing:
            raise InventoryError(f"no {self.by} series {', '.join(missing)} in the forecast",
                                 kind="unknown", hint="see `inventory forecast --json` for codes")
        out += [by_code[c] for c in codes if by_code[c] not in out]
        return out

    def to_dict(self) -> dict[str, Any]:
        return {
            "today": self.today.isoformat(), "by": self.by, "freq": self.freq,
            "horizon": self.horizon,
            "history_periods": [d.isoformat() for d in self.history_periods],
            "forecast_periods": [d.isoformat() for d in self.forecast_periods],
            "lead_time_months": self.lead_time_months, "review_months": self.review_months,
            "cover_periods": self.cover_periods, "quantiles": list(self.quantiles),
            "season": self.season.to_dict(),
            "installed_base": None if self.installed_base is None
            else self.installed_base.to_dict(),
            "class_choice": dict(self.class_choice), "seconds": round(self.seconds, 3),
            "series": [s.to_dict() for s in self.series],
        }


def _r(x: float) -> float | None:
    return None if x is None or not np.isfinite(x) else round(float(x), 4)


# -- the outlook (arrays, for the planner) ------------------------------------------------------------


@dataclass(frozen=True)
class DemandOutlook:
    """Forecast arrays for ``codes`` (one row each).

    - ``mean``: expected demand per period for the periods ``periods`` (season and
      installed base included), ``(n, H)``.
    - ``dist``: per-period demand distribution over the cover (lead time + review):
      negative binomial, mean = average of ``mean`` over the first ``cover`` periods.
      ``dist.over(cover)`` is the demand over lead time + review.
    - ``result``: the time-series fit (classes, methods, backtest paths);
      ``fit``: the variance law (a, b per class, cold start); ``history``: the series
      (NaN before start) on ``history_periods``; ``unit_cost``: preferred supplier cost.
    """

    codes: list[str]
    kinds: list[str]
    freq: str
    periods: NDArray[np.datetime64]
    mean: FloatArray
    dist: DemandDistribution
    cover: float
    result: fc.ForecastResult
    fit: fc.DistributionFit
    history: FloatArray
    history_periods: NDArray[np.datetime64]
    season: SeasonInfo
    installed_base: InstalledBaseInfo | None
    unit_cost: list[float | None] = field(default_factory=list)
    ib_weights: FloatArray | None = None

    def per_period(self, periods: ArrayLike) -> DemandDistribution:
        """Per-period distribution for a cover of ``periods`` from the first forecast period
        (scalar or per series; fractions allowed): its mean is the average expected demand
        over those periods, its variance-to-mean ratio the part's from the variance law at
        that volume. ``.over(periods)`` of it is the demand over the cover."""
        k = np.broadcast_to(np.asarray(periods, dtype=float), (len(self.codes),))
        if np.any(k <= 0):
            raise ValueError("cover must be above zero periods")
        h = self.mean.shape[1]
        cum = np.concatenate([np.zeros((len(self.codes), 1)), np.cumsum(self.mean, axis=1)], 1)
        whole = np.minimum(np.floor(k).astype(np.int64), h)
        frac = np.where(whole < h, k - whole, 0.0)
        last = self.mean[np.arange(len(self.codes)), np.minimum(whole, h - 1)]
        extra = np.maximum(k - h, 0.0) * self.mean[:, -1]
        total = cum[np.arange(len(self.codes)), whole] + frac * last + extra
        m = total / k
        labels = self.result.classification.label
        a = np.array([self.fit.a.get(str(c), self.fit.a.get("pooled", 1.0)) for c in labels])
        b = np.array([self.fit.b.get(str(c), self.fit.b.get("pooled", 1.0)) for c in labels])
        vmr = a * np.power(np.maximum(total, 1e-12), b - 1.0)
        never = ~(np.nan_to_num(self.history) > 0).any(axis=1)
        m = np.where(never, self.fit.cold_rate, m)
        vmr = np.where(never, self.fit.cold_vmr, vmr)
        return negative_binomial(m, vmr)
