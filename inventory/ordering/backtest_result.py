"""The summary of a backtest (:class:`BacktestResult`) and the pooling of several origins'
results into one (:func:`pool`). Pure numpy; used by :mod:`inventory.ordering.backtest`."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import NDArray

FloatArray = NDArray[np.float64]


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


def pool(runs: Sequence[BacktestResult], tests: Sequence[FloatArray], names: tuple[str, ...],
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
