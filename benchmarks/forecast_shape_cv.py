"""Cross-validation of other demand models for the policy (issue 14 item 0, third round):
the shape of each part's demand over the cover, its own spread, and the forecast's level.

    python benchmarks/forecast_shape_cv.py [--csv FILE] [--splits 5] [--seed 7]
                                           [--variants ...] [--ends 35 37 39 41 43]

Data: ../shared/data/carparts_dev.csv (override with --csv or INVENTORY_CARPARTS_CSV);
skipped with a message when absent. Same outer origins and halves as
``forecast_shrink_cv.py`` (6 scored months ending at 35 / 37 / 39 / 41 / 43, so none of the
months ``forecast_calibration.py`` scores is used; ``--ends`` refuses later ones). For each
half the forecast and its negative binomial are fitted once on the training months; each
variant replaces the distribution the policy reads:

- "own spread w": ``LawOptions(own_weight=w)``: each part's variance-to-mean ratio scaled
  by its own history: over the training backtest's pairs (forecast over the cover, demand
  that came), the ratio of the part's squared errors to the law's variances, clipped to
  [0.05, 20], raised to the power w (shrinkage toward the pooled law in log terms) and
  applied to the excess over Poisson (:func:`inventory.forecast.uncertainty.own_spread`).
  The defaults use w = 0.3, chosen here; "own spread 0" is the law alone;
- "sizes alpha": compound demand: sale occasions times sale sizes, the sizes from the
  part's own non-zero months plus alpha pseudo-months drawn from all parts' sizes (sale
  sizes repeat: a part bought in fives sells in fives), the occasions negative binomial with
  the dispersion that keeps the law's variance where the sizes alone give less; the whole
  units over 1 and 2 months by Panjer's recursion (Klugman, Panjer and Willmot, "Loss
  Models", the (a, b, 0) class; recalled from memory);
- "resample lam T": a resampled lead-time demand: the part's own 1- and 2-month sums over
  its last T training months, rescaled to the forecast's level and rounded to whole units,
  mixed with weight lam with the fitted negative binomial (Silver, Pyke and Peterson
  discuss using an empirical lead-time demand distribution; recalled from memory);
- "with SES w": the forecast averaged with simple exponential smoothing (statsforecast's,
  weight w; combining forecasts is common practice), the law's ratio at the new mean;
- "by idle run w": the forecast scaled by the ratio of demand to forecast in the training
  backtest for parts with the same number of months since their last sale (0, 1, 2, 3-5,
  6-11, 12-23, 24+), clipped to [1/3, 3], to the power w.
- "marginal allocation": the defaults' distribution with the "marginal" allocation (least
  expected stock for the pooled target) instead of "uniform"; "sizes 2, marginal": both;
- "sqrt-shaped levels": not the distribution but smoothing's level rule on our forecast m,
  ceil(c m + z sqrt(c m)), z swept over 0-12 (the shape of the baseline with our mean).

The pooled uniform policy is swept over asked fill rates and its stock read at 95.0 %
ACHIEVED fill, divided by SES with z tuned in hindsight on the same half. A variant is kept
only if it holds less stock than the defaults on most (origin, half) units.
"""

from __future__ import annotations

import os

for _var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

import sys  # noqa: E402
from dataclasses import dataclass  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

import forecast_calibration as fcal  # noqa: E402

from inventory.forecast import methods as fc  # noqa: E402
from inventory.forecast.distributions import DemandDistribution, negative_binomial  # noqa: E402
from inventory.forecast.fit_records import FitOptions  # noqa: E402
from inventory.forecast.uncertainty import LawOptions  # noqa: E402
from inventory.ordering.simulate import policy_levels_batch  # noqa: E402

DEFAULT_CSV = ROOT.parent / "shared" / "data" / "carparts_dev.csv"
H = 6
SWEEP = (*fcal.SWEEP, 0.995, 0.998)
IDLE_BINS = np.array([0, 1, 2, 3, 6, 12, 24])
VARIANTS: dict[str, tuple[str, float, float]] = {  # name: (rule, parameter, parameter)
    "own spread 0 (the law alone)": ("spread", 0.0, 0.0),
    "own spread 0.1": ("spread", 0.1, 0.0),
    "own spread 0.2": ("spread", 0.2, 0.0),
    "own spread 0.4": ("spread", 0.4, 0.0),
    "own spread 0.5": ("spread", 0.5, 0.0),
    "sizes 2": ("sizes", 2.0, 0.0),
    "sizes 5": ("sizes", 5.0, 0.0),
    "resample 0.5 24": ("resample", 0.5, 24),
    "resample 0.5 36": ("resample", 0.5, 36),
    "with SES 0.25": ("ses", 0.25, 0.0),
    "with SES 0.5": ("ses", 0.5, 0.0),
    "by idle run 0.5": ("idle", 0.5, 0.0),
    "by idle run 1": ("idle", 1.0, 0.0),
    "marginal allocation": ("marginal", 0.0, 0.0),
    "sizes 2, marginal": ("sizes marginal", 2.0, 0.0),
    "sqrt-shaped levels": ("sqrt", 0.0, 0.0),
}
SQRT_Z = np.linspace(0.0, 12.0, 49)


@dataclass(frozen=True)
class TableDistribution:
    """Whole-unit demand given as probability tables over 1 and 2 periods, read by the
    policy through the same methods as :class:`DemandDistribution` (``over`` picks the
    table; the policy asks for the lead time, 1, and lead time plus review, 2)."""

    mean: np.ndarray
    tables: dict[int, np.ndarray]
    k: int = 1
    rows: np.ndarray | None = None

    kind = "table"

    def __len__(self) -> int:
        return int(self.mean.size)

    def _pmf(self) -> np.ndarray:
        p = self.tables[self.k]
        return p if self.rows is None else p[self.rows]

    def over(self, periods: object) -> TableDistribution:
        k = int(round(float(np.max(np.asarray(periods, dtype=float)))))
        return TableDistribution(self.mean * k, self.tables, k, self.rows)

    def take(self, index: object) -> TableDistribution:
        rows = np.arange(self.tables[1].shape[0]) if self.rows is None else self.rows
        return TableDistribution(self.mean[index], self.tables, self.k, rows[index])

    def variance(self) -> np.ndarray:
        p = self._pmf()
        x = np.arange(p.shape[1])
        m = p @ x
        return p @ (x * x) - m * m

    def cdf(self, at: object) -> np.ndarray:
        x = np.floor(np.broadcast_to(np.asarray(at, dtype=float), self.mean.shape))
        f = np.cumsum(self._pmf(), axis=1)
        got = f[np.arange(f.shape[0]), np.clip(x, 0, f.shape[1] - 1).astype(int)]
        return np.where(x < 0, 0.0, got)

    def expected_shortage(self, level: object) -> np.ndarray:
        s = np.floor(np.broadcast_to(np.asarray(level, dtype=float), self.mean.shape))
        p = self._pmf()
        x = np.arange(p.shape[1])
        m = p @ x
        below = np.where(x[None, :] <= s[:, None], (s[:, None] - x[None, :]) * p, 0.0)
        return np.maximum(np.where(s < 0, m - s, m - s + below.sum(axis=1)), 0.0)

    def quantile(self, prob: object) -> np.ndarray:
        q = np.broadcast_to(np.asarray(prob, dtype=float), self.mean.shape)
        f = np.cumsum(self._pmf(), axis=1)
        return (f < q[:, None] - 1e-12).sum(axis=1).astype(float)


def nb_tables(dist: DemandDistribution, top: int) -> dict[int, np.ndarray]:
    """The fitted distribution's probabilities of 0..top units over 1 and 2 periods (from
    its own ``cdf``, so the same negative binomial, Poisson fallback and zero-mean case)."""
    out = {}
    for k in (1, 2):
        over = dist.over(k)
        cdf = np.stack([over.cdf(np.full(len(dist), float(x))) for x in range(top + 1)], axis=1)
        out[k] = np.diff(cdf, axis=1, prepend=0.0)
    return out


def top_of(dist: DemandDistribution) -> int:
    sd = np.sqrt(2.0 * dist.mean * np.maximum(np.asarray(dist.vmr), 1.0))
    return int(min(np.ceil(np.max(2.0 * dist.mean + 12.0 * sd, initial=1.0)) + 20, 600))


def sale_sizes(train: np.ndarray, alpha: float, top: int) -> np.ndarray:
    """Per series, the probability of each sale size 1..top (index 0 unused)."""
    v = np.minimum(np.nan_to_num(train).astype(int), top)
    n = v.shape[0]
    counts = np.zeros((n, top + 1))
    for c in range(v.shape[1]):
        np.add.at(counts, (np.arange(n), v[:, c]), 1.0)
    counts[:, 0] = 0.0
    pooled = counts.sum(axis=0) / max(counts.sum(), 1.0)
    g = counts + alpha * pooled[None, :]
    return g / np.maximum(g.sum(axis=1, keepdims=True), 1e-12)


def compound(train: np.ndarray, dist: DemandDistribution, alpha: float) -> TableDistribution:
    """Sale occasions (negative binomial) times the part's own sale sizes, by Panjer's
    recursion f(x) = sum_j (a + b j / x) g(j) f(x - j), f(0) = P(no occasion)."""
    assert dist.vmr is not None
    top = top_of(dist)
    g = sale_sizes(train, alpha, top)
    s = np.arange(top + 1)
    e1, e2 = g @ s, g @ (s * s)
    tables = {}
    for k in (1, 2):
        nu = dist.mean * k / np.maximum(e1, 1e-12)
        law_var = dist.mean * k * np.maximum(dist.vmr, 1.0)
        w = 1.0 + np.maximum(law_var - nu * e2, 0.0) / np.maximum(nu * e1 * e1, 1e-12)
        poisson = w <= 1.0 + 1e-6
        w = np.maximum(w, 1.0 + 1e-9)
        r = nu / (w - 1.0)
        a = np.where(poisson, 0.0, 1.0 - 1.0 / w)
        b = np.where(poisson, nu, (r - 1.0) * (1.0 - 1.0 / w))
        f = np.zeros((nu.size, top + 1))
        f[:, 0] = np.where(poisson, np.exp(-nu), np.exp(-r * np.log(w)))
        for x in range(1, top + 1):
            j = np.arange(1, x + 1)
            f[:, x] = ((a[:, None] + b[:, None] * j / x) * g[:, j] * f[:, x - j]).sum(axis=1)
        f[dist.mean <= 0] = 0.0
        f[dist.mean <= 0, 0] = 1.0
        tables[k] = f
    return TableDistribution(dist.mean, tables)


def resampled(train: np.ndarray, dist: DemandDistribution, lam: float, months: int
              ) -> TableDistribution:
    top = top_of(dist)
    tables = nb_tables(dist, top)
    tail = np.nan_to_num(train[:, -months:])
    n = tail.shape[0]
    for k in (1, 2):
        sums = np.lib.stride_tricks.sliding_window_view(tail, k, axis=1).sum(axis=2)
        hist = sums.mean(axis=1)
        scale = np.where(hist > 0, dist.mean * k / np.where(hist > 0, hist, 1.0), 0.0)
        units = np.clip(np.round(sums * scale[:, None]), 0, top).astype(int)
        emp = np.zeros((n, top + 1))
        for c in range(units.shape[1]):
            np.add.at(emp, (np.arange(n), units[:, c]), 1.0 / units.shape[1])
        w = np.where(hist > 0, lam, 0.0)[:, None]
        tables[k] = w * emp + (1.0 - w) * tables[k]
    return TableDistribution(dist.mean, tables)


def at_mean(dist: DemandDistribution, m: np.ndarray, law: tuple[float, float],
            sold: np.ndarray) -> DemandDistribution:
    """The negative binomial at a new mean for the series that have sold, the law's ratio
    a (cover m)^(b-1) recomputed; never-sold series keep the cold-start rate."""
    assert dist.vmr is not None
    a, b = law
    vmr = a * np.power(np.maximum(fcal.COVER * m, 1e-12), b - 1.0)
    return negative_binomial(np.where(sold, m, dist.mean), np.where(sold, vmr, dist.vmr))


def idle_months(v: np.ndarray, end: int) -> np.ndarray:
    """Months since each series' last sale before period ``end`` (``end`` when none)."""
    w = v[:, :end] > 0
    last = np.where(w.any(axis=1), end - 1 - np.argmax(w[:, ::-1], axis=1), -1)
    return end - 1 - last


def idle_factors(train: np.ndarray, res: fc.ForecastResult) -> np.ndarray:
    """Demand over forecast in the training backtest, per idle-run bin."""
    v = np.nan_to_num(train)
    num, den = np.zeros(IDLE_BINS.size), np.zeros(IDLE_BINS.size)
    for j, o in enumerate(res.origins):
        h = min(res.origin_paths.shape[2], v.shape[1] - o)
        if h <= 0:
            continue
        b = np.searchsorted(IDLE_BINS, idle_months(v, o), side="right") - 1
        np.add.at(num, b, v[:, o:o + h].sum(axis=1))
        np.add.at(den, b, res.origin_paths[j][:, :h].sum(axis=1))
    return np.where(den > 0, num / np.maximum(den, 1e-12), 1.0)


def variant(name: str, train: np.ndarray, res: fc.ForecastResult, fit: fc.DistributionFit
            ) -> DemandDistribution | TableDistribution:
    rule, p1, p2 = VARIANTS[name]
    dist = fit.dist
    law = (fit.a["pooled"], fit.b["pooled"])
    sold = np.nansum(train, axis=1) > 0
    assert dist.vmr is not None
    if rule == "spread":
        return fc.fit_distribution(train, res, cover=fcal.COVER, hold=H,
                                   law=LawOptions(own_weight=p1)).dist
    if rule.startswith("sizes"):
        return compound(train, dist, p1)
    if rule in ("marginal", "sqrt"):
        return dist
    if rule == "resample":
        return resampled(train, dist, p1, int(p2))
    if rule == "ses":
        return at_mean(dist, p1 * fcal.ses_mean(train) + (1.0 - p1) * dist.mean, law, sold)
    factor = idle_factors(train, res)
    b = np.searchsorted(IDLE_BINS, idle_months(np.nan_to_num(train), train.shape[1]),
                        side="right") - 1
    return at_mean(dist, dist.mean * np.clip(factor[b], 1 / 3, 3.0) ** p1, law, sold)


def stocks(sub: np.ndarray, pos: np.ndarray, names: list[str]) -> dict[str, float]:
    train, test = sub[:, :-H], sub[:, -H:]
    res = fc.fit_forecast(train, season_pos=pos[:-H], options=FitOptions(horizon=H))
    fit = fc.fit_distribution(train, res, cover=fcal.COVER, hold=H)
    out = {}
    for name in names:
        rule = VARIANTS[name][0] if name in VARIANTS else "defaults"
        dist = fit.dist if rule == "defaults" else variant(name, train, res, fit)
        if rule == "sqrt":
            levels = [fcal.sqrt_levels(dist.mean, z) for z in SQRT_Z]
        else:
            levels = policy_levels_batch(dist, SWEEP,  # type: ignore[arg-type]
                                         allocation=("marginal" if rule.endswith("marginal")
                                                     else "uniform"),
                                         lead_time=fcal.LEAD, review_period=fcal.REVIEW)
        out[name] = fcal.stock_of_sweep([fcal.simulate(lv, test) for lv in levels], 0.95)
    return out


def main(argv: list[str] | None = None) -> int:
    try:
        import statsforecast  # noqa: F401
    except ImportError:
        print("skipped: statsforecast is not installed (pip install -e '.[test]')")
        return 0
    return fcal.variant_cv(__doc__.splitlines()[0], list(VARIANTS), stocks, argv, DEFAULT_CSV)


if __name__ == "__main__":
    raise SystemExit(main())
