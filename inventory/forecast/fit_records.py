"""What a forecast fit is asked (:class:`FitOptions`) and what it returns (:class:`ForecastResult`).

The fit itself is :func:`inventory.forecast.methods.fit_forecast`.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Literal

import numpy as np
from numpy.typing import NDArray

from inventory.forecast import demand as dm
from inventory.forecast.passes import FloatArray

METHODS = ("ses", "croston", "sba", "tsb", "adida", "imapa")
# method families: a combination takes the best candidate of each family
FAMILY = {"ses": "ses", "croston": "croston", "sba": "croston", "tsb": "tsb",
          "adida": "aggregation", "imapa": "aggregation"}


@dataclass(frozen=True)
class FitOptions:
    """Knobs of :func:`fit_forecast`, with their defaults.

    - ``methods``: candidates, any of :data:`METHODS`.
    - ``param_modes``: "series" (constants per series) and/or "class" (per SBC class).
      Default per class only: cross-validated by the stock at 95.0 % achieved fill
      (``benchmarks/forecast_choice_cv.py``, origins scored before month 43, three seeds of
      ten halves of the carparts series) it held less stock than "series" + "class" on 103
      of 150 (origin, half) units, median change -1.3 / -0.2 / -1.0 % per seed, the worst
      half unchanged (0.911 / 0.761 / 0.823 against 0.909 / 0.784 / 0.824); per-series
      constants fit the selection window's noise.
    - ``ses_alphas``: SES grid; ``alphas`` / ``betas``: Croston, SBA and TSB grids for the
      size and the interval/probability constants; ``agg_alphas``: ADIDA and IMAPA grid
      (0.1..0.3, the range statsforecast searches).
    - ``origins``: rolling origins in the selection backtest, one period apart, the last
      one ``horizon`` periods before the end of the data; ``horizon``: periods scored.
    - ``combine``: the largest number of candidates whose mean may be chosen (1 = pure
      selection); a combination takes the best candidate of each method family in rank
      order. ``single_margin``: a single candidate is kept over a combination only if it
      scores better by this fraction (0.5 %: combinations are the more robust choice when
      the backtest cannot tell them apart; 0 = plain comparison).
    - ``select``: "class" (per SBC class, robust) or "series" (per series, noisy).
    - ``seasonal``: "auto" (on only if the backtest RMSSE improves by ``seasonal_gain``, a
      fraction), "on" or "off"; ``period``: season length in periods.
    - ``max_level``: largest ADIDA / IMAPA bucket.
    - ``chunk_series``: above this many series the fit runs on interleaved chunks of at
      most this many (series i goes to chunk i mod k), each chunk choosing its own class
      constants, methods and season, so memory stays bounded (the candidate passes hold
      about 14 KB per series); every chunk still has thousands of series per fit.
    - ``adi_cutoff`` / ``cv2_cutoff``: the SBC class boundaries the per-class choice and
      the variance law group by (1.32 and 0.49, Syntetos, Boylan and Croston 2005; kept
      after cross-validation, ``benchmarks/forecast_choice_cv.py``).
    """

    methods: tuple[str, ...] = METHODS
    param_modes: tuple[str, ...] = ("class",)  # chosen by cross-validation: see above
    ses_alphas: tuple[float, ...] = tuple(np.round(np.arange(0.02, 1.0, 0.04), 2))
    alphas: tuple[float, ...] = (0.05, 0.1, 0.2, 0.3, 0.5)
    betas: tuple[float, ...] = (0.05, 0.1, 0.2, 0.3, 0.5)
    agg_alphas: tuple[float, ...] = (0.1, 0.15, 0.2, 0.25, 0.3)
    origins: int = 6
    horizon: int = 6
    combine: int = 3
    single_margin: float = 0.005
    select: Literal["class", "series"] = "class"
    seasonal: Literal["auto", "on", "off"] = "auto"
    seasonal_gain: float = 0.01
    period: int = 12
    max_level: int = 12
    chunk_series: int = 4000
    adi_cutoff: float = 1.32
    cv2_cutoff: float = 0.49


@dataclass(frozen=True)
class ForecastResult:
    """A fitted forecast for ``n`` series.

    - ``level``: per-period level after the data (deseasonalised when ``seasonal``).
    - ``method``: the chosen candidate, or "a+b+c" for a combination, per series.
    - ``indices``: ``(n, period)`` seasonal index per series (all ones when off);
      ``next_pos``: season position of the first period after the data.
    - ``origins``: the rolling origins of the selection backtest and ``origin_paths``
      ``(O, n, h)``: the chosen model's forecast made at each of them for the ``h``
      periods that followed (the distribution is calibrated on these).
    - ``scores``: backtest RMSSE per candidate and series; ``class_choice``: choice per
      class; ``seasonal_scores``: mean backtest RMSSE of the chosen methods without / with
      the season (NaN when the screen stopped it); ``season_screen``: the same for the
      screening method (SES, one constant per class).
    - ``params``: smoothing constants of each series' first chosen candidate (display).
    """

    level: FloatArray
    method: NDArray[np.str_]
    classification: dm.Classification
    seasonal: bool
    indices: FloatArray
    next_pos: int
    origins: NDArray[np.int64]
    origin_paths: FloatArray
    scores: dict[str, FloatArray] = field(default_factory=dict)
    class_choice: dict[str, str] = field(default_factory=dict)
    seasonal_scores: tuple[float, float] = (np.nan, np.nan)
    params: dict[str, FloatArray] = field(default_factory=dict)
    season_screen: tuple[float, float] = (np.nan, np.nan)

    def mean(self, horizon: int) -> FloatArray:
        """Forecast mean per series and period for the next ``horizon`` periods, ``(n, h)``."""
        period = self.indices.shape[1]
        pos = (self.next_pos + np.arange(horizon)) % period
        return self.level[:, None] * self.indices[:, pos]
