"""Cross-validation of an empirical-Bayes (gamma-Poisson) shrinkage of the demand rate of
slow movers toward their SBC class's pooled rate (issue 14 item 0): does it hold less stock
at 95.0 % achieved fill than the fitted forecast as it is?

    python benchmarks/forecast_shrink_cv.py [--csv FILE] [--splits 5] [--seed 7]

Data: ../shared/data/carparts_dev.csv (override with --csv or INVENTORY_CARPARTS_CSV);
skipped with a message when absent. Same outer origins and halves as
``forecast_choice_cv.py`` (6 scored months ending at 35 / 37 / 39 / 41 / 43, so none of the
months ``forecast_calibration.py`` scores is used). For each half the forecast and its
negative binomial are fitted once on the training months; each variant then replaces the
per-period mean m of the series that have sold (never-sold series keep the cold-start rate)
and recomputes their variance-to-mean ratio from the fitted variance law, a (k m)^(b-1):

- "post T": the gamma-Poisson posterior mean (alpha + S) / (beta + T) of the units S sold in
  the last T training months, the gamma prior (alpha, beta) fitted per SBC class by the
  method of moments on the series' rates S / T (between-series variance = variance of the
  rates minus the Poisson part, mean / T; e.g. Klugman, Panjer and Willmot, "Loss Models",
  Buhlmann credibility with a Poisson-gamma mix), the forecast itself discarded;
- "cred T": the Buhlmann credibility mix Z m + (1 - Z) alpha / beta of the forecast m and the
  class's prior mean, Z = T / (T + beta);
- suffix " IL": only for the intermittent and lumpy classes (the slow movers), the others
  keep the forecast;
- "bins N": an empirical law in place of the parametric a M^b: the training backtest's
  (forecast over the cover, demand that followed) pairs of series that had sold, pooled into
  N bins of equal count by the forecast, give each bin its variance-to-mean ratio
  var(d) / mean(d) at the cover horizon; "bins N mean" also scales the forecast of the
  bin's series by mean(d) / mean(forecast) (the bias of the bin's forecasts); "bins N by
  class": the bins formed within each SBC class (similar mean and intermittency).

The pooled uniform policy is swept over asked fill rates and its stock read at 95.0 %
ACHIEVED fill, divided by SES with z tuned in hindsight on the same half. A variant is kept
only if it holds less stock than the defaults on most (origin, half) units.
"""

from __future__ import annotations

import os

for _var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

import sys  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

import forecast_calibration as fcal  # noqa: E402

from inventory.forecast import methods as fc  # noqa: E402
from inventory.forecast.distributions import DemandDistribution, negative_binomial  # noqa: E402
from inventory.forecast.fit_records import FitOptions  # noqa: E402
from inventory.ordering.simulate import policy_levels_batch  # noqa: E402

DEFAULT_CSV = ROOT.parent / "shared" / "data" / "carparts_dev.csv"
H = 6
SWEEP = (*fcal.SWEEP, 0.995, 0.998)
SLOW = ("intermittent", "lumpy")
VARIANTS: dict[str, tuple[str, int, bool]] = {  # name: (rule, T, slow movers only)
    "post 6 IL": ("post", 6, True),
    "post 9 IL": ("post", 9, True),
    "post 12 IL": ("post", 12, True),
    "post 24 IL": ("post", 24, True),
    "cred 6 IL": ("cred", 6, True),
    "cred 12 IL": ("cred", 12, True),
    "cred 24 IL": ("cred", 24, True),
    "cred 24": ("cred", 24, False),
    "bins 10 IL": ("bins", 10, True),
    "bins 10": ("bins", 10, False),
    "bins 20 IL": ("bins", 20, True),
    "bins 5 by class": ("binsclass", 5, False),
    "bins 10 by class": ("binsclass", 10, False),
    "bins 10 mean IL": ("binsmean", 10, True),
    "bins 10 mean": ("binsmean", 10, False),
}


def pairs(train: np.ndarray, res: fc.ForecastResult, cover: int) -> tuple[np.ndarray, ...]:
    """(forecast over ``cover`` periods, demand that came) at every backtest origin and lag
    0..H-1, series that had sold before the origin (as ``fit_distribution``)."""
    v = np.nan_to_num(train)
    has = v > 0
    first = np.where(has.any(axis=1), np.argmax(has, axis=1), v.shape[1])
    mus, ds, cls = [], [], []
    labels = np.asarray(res.classification.label).astype(str)
    for j, o in enumerate(res.origins):
        pc = np.cumsum(res.origin_paths[j], axis=1)
        use = first < o
        for lag in range(H):
            if lag + cover > pc.shape[1] or o + lag + cover > v.shape[1]:
                break
            mus.append((pc[:, lag + cover - 1] - (pc[:, lag - 1] if lag else 0.0))[use])
            ds.append(v[:, o + lag:o + lag + cover].sum(axis=1)[use])
            cls.append(labels[use])
    return np.concatenate(mus), np.concatenate(ds), np.concatenate(cls)


def binned(dist: DemandDistribution, labels: np.ndarray, sold: np.ndarray,
           pr: tuple[np.ndarray, ...], spec: tuple[str, int, bool], cover: int
           ) -> DemandDistribution:
    rule, nbins, slow_only = spec
    if rule == "binsclass":
        dist0 = dist
        for c in np.unique(labels):
            pc = pr[2] == c
            if pc.sum() < 300:
                continue
            part = binned(dist0, labels, sold & (labels == c), (pr[0][pc], pr[1][pc], pr[2][pc]),
                          ("bins", nbins, slow_only), cover)
            dist = negative_binomial(dist.mean, np.where(sold & (labels == c),
                                                         np.asarray(part.vmr), dist.vmr))
        return dist
    mu, d = pr[0], pr[1]
    edges = np.unique(np.quantile(mu, np.linspace(0, 1, nbins + 1)))
    m = dist.mean.copy()
    vmr = np.asarray(dist.vmr, dtype=float).copy()
    target = sold & (np.isin(labels, SLOW) if slow_only else True)
    pb = np.clip(np.searchsorted(edges, mu, side="right") - 1, 0, edges.size - 2)
    sb = np.clip(np.searchsorted(edges, cover * m, side="right") - 1, 0, edges.size - 2)
    for i in range(edges.size - 1):
        inb = pb == i
        sel = target & (sb == i)
        if inb.sum() < 30 or not sel.any() or d[inb].mean() <= 0:
            continue
        vmr[sel] = max(float(d[inb].var() / d[inb].mean()), 1.0)
        if rule == "binsmean" and mu[inb].mean() > 0:
            m[sel] *= float(d[inb].mean() / mu[inb].mean())
    return negative_binomial(m, vmr)


def gamma_prior(s: np.ndarray, t: int) -> tuple[float, float]:
    """Method-of-moments gamma prior (alpha, beta) of Poisson rates from counts ``s`` over
    ``t`` periods; beta = inf (full shrinkage) when the rates vary no more than Poisson."""
    x = s / t
    mean = float(x.mean())
    between = float(x.var(ddof=1)) - mean / t if x.size > 1 else 0.0
    if mean <= 0 or between <= 0:
        return mean, float("inf")
    beta = mean / between
    return mean * beta, beta


def shrunk(train: np.ndarray, dist: DemandDistribution, labels: np.ndarray,
           law: tuple[float, float], spec: tuple[str, int, bool], cover: int
           ) -> DemandDistribution:
    rule, t, slow_only = spec
    t = min(t, train.shape[1])
    s = np.nansum(train[:, -t:], axis=1)
    sold = np.nansum(train, axis=1) > 0
    m = dist.mean.copy()
    vmr = np.asarray(dist.vmr, dtype=float).copy()
    a, b = law
    for c in np.unique(labels):
        sel = sold & (labels == c)
        if (slow_only and c not in SLOW) or sel.sum() < 10:
            continue
        alpha, beta = gamma_prior(s[sel], t)
        prior = alpha / beta if np.isfinite(beta) else float(s[sel].mean() / t)
        if rule == "post":
            new = (alpha + s[sel]) / (beta + t) if np.isfinite(beta) else np.full(sel.sum(),
                                                                                prior)
        else:
            z = t / (t + beta) if np.isfinite(beta) else 0.0
            new = z * m[sel] + (1 - z) * prior
        m[sel] = new
        vmr[sel] = a * np.power(np.maximum(cover * new, 1e-12), b - 1.0)
    return negative_binomial(m, vmr)


def stocks(sub: np.ndarray, pos: np.ndarray, names: list[str]) -> dict[str, float]:
    train, test = sub[:, :-H], sub[:, -H:]
    res = fc.fit_forecast(train, season_pos=pos[:-H], options=FitOptions(horizon=H))
    fit = fc.fit_distribution(train, res, cover=fcal.COVER, hold=H)
    labels = np.asarray(res.classification.label).astype(str)
    law = (fit.a["pooled"], fit.b["pooled"])
    pr = pairs(train, res, fcal.COVER)
    sold = np.nansum(train, axis=1) > 0
    out = {}
    for name in names:
        spec = VARIANTS.get(name)
        if spec is None:
            dist = fit.dist
        elif spec[0].startswith("bins"):
            dist = binned(fit.dist, labels, sold, pr, spec, fcal.COVER)
        else:
            dist = shrunk(train, fit.dist, labels, law, spec, fcal.COVER)
        lvs = policy_levels_batch(dist, SWEEP, allocation="uniform", lead_time=fcal.LEAD,
                                  review_period=fcal.REVIEW)
        r = [fcal.simulate(lv, test) for lv in lvs]
        out[name] = fcal.stock_at_fill([x[0] for x in r], [x[1] for x in r], 0.95)
    return out


def main(argv: list[str] | None = None) -> int:
    return fcal.variant_cv(__doc__.splitlines()[0], list(VARIANTS), stocks, argv, DEFAULT_CSV)


if __name__ == "__main__":
    raise SystemExit(main())
