"""What a forecast is asked: the kind of series and the settings that travel together."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Literal

from inventory.forecast import installed_base as ib
from inventory.forecast import methods as fc

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
