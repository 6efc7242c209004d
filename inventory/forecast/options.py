"""What a forecast is asked: which series over which periods (:class:`ForecastRequest`), the
settings that travel together (:class:`ForecastSettings`) and the files ``inventory forecast``
writes (:class:`ForecastFiles`)."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from datetime import date
from typing import Any, Literal

from inventory.forecast import installed_base as ib
from inventory.forecast import methods as fc
from inventory.forecast.demand import Freq

By = Literal["part", "kit", "family", "item"]
WEEKS_PER_MONTH = 52.1775 / 12
Progress = Callable[[str], None]


@dataclass(frozen=True)
class ForecastSettings:
    """Options of :func:`~inventory.forecast.service.forecast_items` and
    :func:`~inventory.forecast.service.demand_outlook` that travel together.

    ``quantiles``: the range shown (10 % and 90 %); ``seasonal_gain``: the fraction the
    profile must lower the backtest RMSSE by to be used; ``installed_base``: try the
    installed-base blend (monthly only); ``blend_gain``: the fraction it must gain;
    ``blend_min_series``: a class with fewer series takes the weight pooled over all.
    """

    quantiles: tuple[float, float] = (0.1, 0.9)
    seasonal_gain: float = 0.01
    installed_base: bool = True
    blend_gain: float = 0.01
    blend_min_series: int = 5
    intervals: ib.ServiceIntervals = field(default_factory=ib.ServiceIntervals)
    returns: ib.ReturnOptions = field(default_factory=ib.ReturnOptions)
    fit: fc.FitOptions = field(default_factory=fc.FitOptions)


@dataclass(frozen=True)
class ForecastRequest:
    """Which forecast: every series of ``by`` (part, kit, family or item) from the history
    before ``today``'s month (``freq="M"``) or ISO week (``"W"``), ``horizon`` periods ahead
    (at least the cover), the demand distribution over ``lead_time_months`` +
    ``review_months``."""

    today: date
    horizon: int = 6
    by: By = "part"
    freq: Freq = "M"
    lead_time_months: float = 1.0
    review_months: float = 1.0


@dataclass(frozen=True)
class ForecastFiles:
    """What ``inventory forecast`` writes: charts for the ``top`` series by usage value plus
    those named in ``parts``; the workbook at ``xlsx`` and the charts in the folder
    ``charts``, or (``defaults``) under ``reports/`` when not given."""

    top: int = 0
    parts: tuple[str, ...] = ()
    xlsx: Any = None
    charts: Any = None
    defaults: bool = True
