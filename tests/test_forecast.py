"""Forecasting core checked against outside sources.

- statsforecast (Nixtla) 2.x models on the same inputs and parameters:
  ``SimpleExponentialSmoothing(alpha)``, ``CrostonClassic()`` (alpha = beta = 0.1),
  ``CrostonSBA()`` (0.1 and factor 0.95), ``TSB(alpha_d, alpha_p)``, ``ADIDA()`` and
  ``IMAPA()``. Initialisation conventions matched explicitly: SES starts its level at
  y[0]; Croston starts size and interval at the first demand and the periods up to and
  including it; TSB (our ``init="first"``) starts the probability at the first period's
  indicator and the size at the first demand; ADIDA/IMAPA drop the remainder at the start
  and pick alpha in [0.1, 0.3] by golden-section search, so the test passes their alpha
  (read with statsforecast's own helper) to our functions. statsforecast reports 0 as
  the in-sample forecast before the first demand where we report NaN ("no forecast
  yet"), so fitted values are compared where ours is defined.
- The worked example of ../shared/REFERENCE.md section 7.6 (computed there with Python).
- The Syntetos-Boylan-Croston cut-offs 1.32 and 0.49 (Syntetos, Boylan and Croston 2005,
  JORS 56(5); REFERENCE.md 7.4).
- scipy.stats for the negative binomial draws of the variance-law fit.
- pandas for calendar bucketing.
"""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from inventory.core.model import KitSpec, ServiceLevel
from inventory.forecast import demand as dm
from inventory.forecast import methods as fc

statsforecast_models = pytest.importorskip("statsforecast.models")

REF_SERIES = np.array([0, 3, 0, 0, 2, 0, 0, 0, 4, 0, 1, 0], dtype=float)
CARPARTS = Path(os.environ.get(
    "INVENTORY_CARPARTS_CSV",
    Path(__file__).resolve().parents[2] / "shared" / "data" / "carparts_dev.csv",
))


def _intermittent(seed: int, n: int = 12, t: int = 40) -> np.ndarray:
    """Random intermittent demand: Bernoulli occurrences, geometric sizes."""
    rng = np.random.default_rng(seed)
    occur = rng.random((n, t)) < rng.uniform(0.15, 0.7, size=(n, 1))
    sizes = rng.geometric(rng.uniform(0.2, 0.8, size=(n, 1)), size=(n, t))
    y = (occur * sizes).astype(float)
    y[:, 0] = np.where(rng.random(n) < 0.5, 0.0, y[:, 0])
    y[y.sum(axis=1) == 0, -1] = 1.0  # every series has some demand
    return y


def _carparts(n: int = 40) -> np.ndarray:
    if not CARPARTS.exists():
        pytest.skip(f"{CARPARTS} not found")
    frame = pd.read_csv(CARPARTS)
    return frame.drop(columns="month").to_numpy(float).T[:n, :45]


def _series_sets() -> list[np.ndarray]:
    sets = [_intermittent(1), _intermittent(2, t=25)]
    if CARPARTS.exists():
        sets.append(_carparts())
    return sets


# -- statsforecast equality ----------------------------------------------------------------


@pytest.mark.parametrize("alpha", [0.1, 0.35, 0.8])
def test_ses_equals_statsforecast(alpha: float) -> None:
    # statsforecast SimpleExponentialSmoothing(alpha): level starts at y[0]
    for y in _series_sets():
        ours = fc.ses(y, alpha)
        for i in range(y.shape[0]):
            ref = statsforecast_models.SimpleExponentialSmoothing(alpha=alpha).forecast(
                y=y[i], h=1, fitted=True)
            assert ours.forecast[i] == pytest.approx(ref["mean"][0], rel=1e-10, abs=1e-12)
            np.testing.assert_allclose(ours.fitted[i, 1:], ref["fitted"][1:], rtol=1e-10,
                                       atol=1e-12)


@pytest.mark.parametrize(("variant", "model"), [("classic", "CrostonClassic"),
                                                ("sba", "CrostonSBA")])
def test_croston_and_sba_equal_statsforecast(variant: str, model: str) -> None:
    # statsforecast CrostonClassic / CrostonSBA: alpha = beta = 0.1, SBA factor 1 - 0.1/2
    for y in _series_sets():
        ours = fc.croston(y, 0.1, 0.1, variant=variant)
        for i in range(y.shape[0]):
            ref = getattr(statsforecast_models, model)().forecast(y=y[i], h=1, fitted=True)
            assert ours.forecast[i] == pytest.approx(ref["mean"][0], rel=1e-10)
            mine = ours.fitted[i]
            ok = np.isfinite(mine)
            np.testing.assert_allclose(mine[ok], ref["fitted"][ok], rtol=1e-10)


@pytest.mark.parametrize(("alpha", "beta"), [(0.1, 0.1), (0.3, 0.05), (0.05, 0.4)])
def test_tsb_equals_statsforecast(alpha: float, beta: float) -> None:
    # statsforecast TSB(alpha_d=alpha, alpha_p=beta); our init="first" is their convention
    for y in _series_sets():
        ours = fc.tsb(y, alpha, beta, init="first")
        for i in range(y.shape[0]):
            ref = statsforecast_models.TSB(alpha_d=alpha, alpha_p=beta).forecast(
                y=y[i], h=1, fitted=True)
            assert ours.forecast[i] == pytest.approx(ref["mean"][0], rel=1e-10, abs=1e-12)
            mine = ours.fitted[i]
            ok = np.isfinite(mine)
            np.testing.assert_allclose(mine[ok], ref["fitted"][ok], rtol=1e-10, atol=1e-12)


def _sf_alpha(buckets: np.ndarray) -> float:
    """The alpha statsforecast's golden-section search picks in [0.1, 0.3] (its own helper)."""
    from statsforecast.models import _optimized_ses_forecast

    return float(_optimized_ses_forecast(buckets.astype(float))[2])


def test_adida_equals_statsforecast() -> None:
    # statsforecast ADIDA(): k = round(mean interval) with no upper limit, buckets aligned
    # to the end (our engine caps k at 12 by default; lifted here to match)
    for y in _series_sets():
        k = fc.aggregation_level(y, max_level=10**6)
        for i in range(y.shape[0]):
            yi = y[i]
            n_b = yi.size // k[i]
            buckets = yi[yi.size - n_b * k[i]:].reshape(n_b, k[i]).sum(axis=1)
            alpha = _sf_alpha(buckets)
            ours = fc.adida(yi, alpha, k=k[i])[0]
            ref = statsforecast_models.ADIDA().forecast(y=yi, h=1)["mean"][0]
            assert ours == pytest.approx(ref, rel=1e-9)


def test_imapa_equals_statsforecast() -> None:
    # statsforecast IMAPA(): mean over k = 1..round(mean interval), alpha per level
    for y in _series_sets():
        top = fc.aggregation_level(y, max_level=10**6)
        for i in range(y.shape[0]):
            yi = y[i]
            alphas = np.full((top[i], 1), 0.1)
            for k in range(1, top[i] + 1):
                cut = yi[yi.size % k:]
                alphas[k - 1, 0] = _sf_alpha(cut.reshape(-1, k).sum(axis=1))
            ours = fc.imapa(yi[None, :], alphas, max_level=int(top[i]))[0]
            ref = statsforecast_models.IMAPA().forecast(y=yi, h=1)["mean"][0]
            assert ours == pytest.approx(ref, rel=1e-9)


# -- REFERENCE.md section 7.6 worked example ----------------------------------------------------


def test_reference_worked_example_croston_sba() -> None:
    # REFERENCE.md 7.6 (C): alpha = 0.2 for size and interval; z = 2.632, p = 2.448,
    # Croston 1.075, SBA (x 0.9) 0.968; updates at months 5, 9, 11 give 1.273, 1.188, 1.075
    res = fc.croston(REF_SERIES, 0.2, 0.2)
    assert res.forecast[0] == pytest.approx(2.632 / 2.448, abs=5e-4)
    assert round(float(res.forecast[0]), 3) == 1.075
    assert res.fitted[0, 2] == pytest.approx(1.5)  # after the first demand: 3 / 2
    assert res.fitted[0, 5] == pytest.approx(1.273, abs=5e-4)
    assert res.fitted[0, 9] == pytest.approx(1.188, abs=5e-4)
    assert round(float(fc.sba(REF_SERIES, 0.2).forecast[0]), 3) == 0.968


def test_reference_worked_example_tsb_adida() -> None:
    # REFERENCE.md 7.6 (C): TSB alpha 0.2, beta 0.1, p0 = 1/ADI = 0.364, z0 = 2.5 -> 0.845;
    # ADIDA k = 3: buckets 3, 2, 4, 1, SES 0.2 from 3 -> 2.632 per quarter -> 0.877 / month
    assert round(float(fc.tsb(REF_SERIES, 0.2, 0.1, init="mean").forecast[0]), 3) == 0.845
    assert round(float(fc.adida(REF_SERIES, 0.2, k=3)[0]), 3) == 0.877
    # the simple mean of the 12 months quoted there
    assert REF_SERIES.mean() == pytest.approx(0.833, abs=5e-4)


def test_reference_classification() -> None:
    # REFERENCE.md 7.6: intervals 2, 3, 4, 2 -> ADI 2.75; sizes 3, 2, 4, 1 -> CV^2 0.267
    # (sample SD) or 0.200 (population SD) -> intermittent
    sample = dm.classify(REF_SERIES[None, :])
    population = dm.classify(REF_SERIES[None, :], ddof=0)
    assert sample.adi[0] == pytest.approx(2.75)
    assert round(float(sample.cv2[0]), 3) == 0.267
    assert round(float(population.cv2[0]), 3) == 0.200
    assert sample.label[0] == dm.INTERMITTENT == population.label[0]


# -- SBC cut-offs ---------------------------------------------------------------------------------


def _series(adi_intervals: list[int], sizes: list[float]) -> np.ndarray:
    y = []
    for gap, size in zip(adi_intervals, sizes, strict=True):
        y.extend([0.0] * (gap - 1) + [size])
    return np.array(y)


@pytest.mark.parametrize(
    ("intervals", "sizes", "label"),
    [
        ([1] * 8, [5, 5, 6, 5, 4, 5, 5, 6], dm.SMOOTH),  # ADI 1, CV^2 small
        ([1] * 8, [1, 9, 1, 12, 1, 8, 2, 10], dm.ERRATIC),  # ADI 1, CV^2 large
        ([3] * 8, [5, 5, 6, 5, 4, 5, 5, 6], dm.INTERMITTENT),  # ADI 3, CV^2 small
        ([3] * 8, [1, 9, 1, 12, 1, 8, 2, 10], dm.LUMPY),  # ADI 3, CV^2 large
    ],
)
def test_sbc_quadrants(intervals: list[int], sizes: list[float], label: str) -> None:
    # SBC table (REFERENCE.md 7.4): ADI < 1.32 / >= 1.32 against CV^2 < 0.49 / >= 0.49
    c = dm.classify(_series(intervals, sizes)[None, :])
    assert c.label[0] == label


def test_sbc_cutoffs_are_inclusive_above() -> None:
    # "ADI >= 1.32" and "CV^2 >= 0.49" are the upper cells of the SBC table (REFERENCE 7.4):
    # ADI exactly 1.32 (33 periods, 25 demands) is intermittent; pushing the cut-off a
    # hair above turns the same series smooth
    y = np.zeros(33)
    y[np.round(np.linspace(32, 0, 25)).astype(int)] = 5.0
    c = dm.classify(y[None, :])
    assert c.adi[0] == pytest.approx(1.32)
    assert c.label[0] == dm.INTERMITTENT
    assert dm.classify(y[None, :], adi_cutoff=1.3201).label[0] == dm.SMOOTH
    # CV^2 exactly 0.49 with population SD: sizes mean 10, SD 7 -> erratic
    sizes = np.array([3.0, 17.0] * 4)
    c2 = dm.classify(sizes[None, :], ddof=0)
    assert c2.cv2[0] == pytest.approx(0.49)
    assert c2.label[0] == dm.ERRATIC
    assert dm.classify(sizes[None, :], ddof=0, cv2_cutoff=0.4901).label[0] == dm.SMOOTH


def test_no_demand_and_late_start() -> None:
    y = np.array([[0, 0, 0, 0.0], [np.nan, np.nan, 2, 0]])
    c = dm.classify(y)
    assert c.label[0] == dm.NO_DEMAND
    # the late series starts at index 2: first interval 1 -> ADI 1
    assert c.adi[1] == pytest.approx(1.0)


# -- calendar bucketing and kits --------------------------------------------------------------


def test_monthly_and_weekly_buckets_match_pandas() -> None:
    # pandas' calendar periods as the outside reference
    rng = np.random.default_rng(7)
    dates = np.datetime64("2024-01-01") + rng.integers(0, 400, 300).astype("timedelta64[D]")
    series = rng.integers(0, 3, 300)
    qty = rng.integers(1, 5, 300).astype(float)
    frame = pd.DataFrame({"d": pd.to_datetime(dates), "s": series, "q": qty})
    monthly = dm.bucket_demand(dates, series, qty, n_series=3, freq="M")
    ref_m = frame.groupby([frame.s, frame.d.dt.to_period("M")]).q.sum().unstack(fill_value=0)
    for s in range(3):
        got = pd.Series(monthly.values[s], index=pd.PeriodIndex(monthly.periods, freq="M"))
        np.testing.assert_allclose(got.reindex(ref_m.columns).to_numpy(), ref_m.loc[s].to_numpy())
    assert monthly.values.sum() == qty.sum()  # gaps are zeros, nothing lost
    weekly = dm.bucket_demand(dates, series, qty, n_series=3, freq="W")
    ref_w = frame.groupby([frame.s, frame.d.dt.to_period("W-SUN")]).q.sum().unstack(fill_value=0)
    starts = pd.PeriodIndex([p.start_time for p in ref_w.columns], freq="D")
    assert all(pd.Timestamp(x).dayofweek == 0 for x in weekly.periods)  # ISO weeks: Monday
    for s in range(3):
        got = pd.Series(weekly.values[s], index=pd.to_datetime(weekly.periods))
        np.testing.assert_allclose(got.reindex(starts.to_timestamp()).to_numpy(),
                                   ref_w.loc[s].to_numpy())


def test_kit_explosion_through_bom() -> None:
    kits = [
        KitSpec("K-LOW", "F1", ServiceLevel.LOWER_LEG, (("WP-32", 2), ("FR-32", 2))),
        KitSpec("K-AIR", "F1", ServiceLevel.AIR_SPRING,
                (("WP-32", 2), ("FR-32", 2), ("OR-214", 1))),
    ]
    parts = ["WP-32", "FR-32", "OR-214"]
    bom = dm.bom_matrix(kits, parts)
    kit_demand = np.array([[1, 0, 3], [0, 2, 1.0]])
    direct = np.array([[0, 0, 0], [1, 0, 0], [0, 0, 5.0]])
    out = dm.explode_kits(kit_demand, bom, direct)
    # by hand: WP-32 = 2*(1,0,3) + 2*(0,2,1); OR-214 = (0,2,1) + direct (0,0,5)
    np.testing.assert_allclose(out[0], [2, 4, 8])
    np.testing.assert_allclose(out[1], [3, 4, 8])
    np.testing.assert_allclose(out[2], [0, 2, 6])
    with pytest.raises(KeyError, match="K-LOW"):
        dm.bom_matrix(kits, ["WP-32"])


# -- seasonality and selection ----------------------------------------------------------------


def _seasonal_panel(seed: int, amplitude: float, n: int = 300, years: int = 4) -> tuple:
    rng = np.random.default_rng(seed)
    months = np.arange(12 * years) % 12
    profile = 1.0 + amplitude * np.cos(2 * np.pi * (months - 4) / 12)  # peak in May
    rate = rng.gamma(1.0, 0.8, size=(n, 1)) * profile[None, :]
    return rng.poisson(rate).astype(float), months, profile


def test_pooled_seasonal_indices_recover_the_profile() -> None:
    y, months, profile = _seasonal_panel(3, 0.6)
    idx = fc.seasonal_indices(y, months)[0]
    np.testing.assert_allclose(idx, profile[:12] / profile[:12].mean(), atol=0.08)


def test_seasonal_profile_switches_on_and_off() -> None:
    y, months, _ = _seasonal_panel(4, 0.7)
    on = fc.fit_forecast(y, season_pos=months)
    assert on.seasonal
    flat, months_f, _ = _seasonal_panel(5, 0.0)
    off = fc.fit_forecast(flat, season_pos=months_f)
    assert not off.seasonal
    # seasonal forecasts follow the pooled profile: May above January on average
    path = on.mean(12)
    assert path[:, (4 - on.next_pos) % 12].sum() > path[:, (0 - on.next_pos) % 12].sum()


def test_carparts_has_no_useful_season() -> None:
    # carparts (Hyndman et al. 2008 data set) has no seasonality: the backtest keeps it off
    y = _carparts(300)
    months = np.arange(y.shape[1]) % 12
    assert not fc.fit_forecast(y, season_pos=months).seasonal


def test_rmsse_does_not_reward_zero_forecasts() -> None:
    # M5 definitions: for an intermittent series MAE-based MASE prefers forecasting zero
    # (the median), squared-error RMSSE prefers the mean
    history = np.array([[0, 0, 3, 0, 0, 0, 2, 0, 0, 4, 0, 0.0]])
    actual = np.array([[0, 2, 0, 0, 3, 0.0]])
    zero = np.zeros_like(actual)
    mean = np.full_like(actual, actual.mean())
    assert fc.mase(actual, zero, history)[0] < fc.mase(actual, mean, history)[0]
    assert fc.rmsse(actual, mean, history)[0] < fc.rmsse(actual, zero, history)[0]
    # RMSSE by hand: sqrt(mean squared error / mean squared one-step change)
    scale = np.mean(np.diff(history[0]) ** 2)
    assert fc.rmsse(actual, zero, history)[0] == pytest.approx(
        np.sqrt(np.mean(actual**2) / scale))


def test_fit_forecast_selects_per_class_and_forecasts_nonnegative() -> None:
    y = _intermittent(11, n=200, t=40)
    res = fc.fit_forecast(y)
    assert res.level.shape == (200,)
    assert np.all(res.level >= 0)
    classes = set(res.classification.label.tolist())
    assert set(res.class_choice) == classes
    for c, choice in res.class_choice.items():
        for name in choice.split("+"):
            assert name.split("@")[0] in fc.METHODS
        assert set(res.method[res.classification.label == c]) == {choice}
    assert res.origin_paths.shape == (res.origins.size, 200, 6)


def test_default_smoothing_constant_is_one_per_class_minimising_the_class_error() -> None:
    """The default (issue 14 item 0, chosen by benchmarks/forecast_choice_cv.py): one SES
    constant per SBC class, the grid point with the least class sum of each series' mean
    squared one-step error over its mean squared one-step change. Reference: statsforecast's
    SimpleExponentialSmoothing(alpha) (its fitted values give the errors, its forecast the
    level), the minimum found by brute force over the grid."""
    y = _intermittent(21, n=60, t=36)
    opt = fc.FitOptions(horizon=6, methods=("ses",), combine=1)
    assert opt.param_modes == ("class",)
    res = fc.fit_forecast(y, options=opt)
    assert set(res.method.tolist()) == {"ses@class"}
    alpha = res.params["alpha"]
    labels = res.classification.label
    for c in np.unique(labels):
        rows = np.flatnonzero(labels == c)
        assert np.unique(alpha[rows]).size == 1
        scores = []
        for a in opt.ses_alphas:
            total = 0.0
            for i in rows:
                ref = statsforecast_models.SimpleExponentialSmoothing(alpha=a).forecast(
                    y=y[i], h=1, fitted=True)
                mse = np.mean((y[i, 1:] - ref["fitted"][1:]) ** 2)
                total += mse / np.mean(np.diff(y[i]) ** 2)
            scores.append(total)
        best = min(scores)
        chosen = scores[list(opt.ses_alphas).index(alpha[rows[0]])]
        assert chosen <= best * (1 + 1e-9)
        for i in rows:
            ref = statsforecast_models.SimpleExponentialSmoothing(alpha=alpha[i]).forecast(
                y=y[i], h=1)
            assert res.level[i] == pytest.approx(ref["mean"][0], rel=1e-9, abs=1e-12)


def test_late_starting_series_ignore_leading_gaps() -> None:
    y = np.array([[np.nan] * 10 + [2, 0, 2, 0, 2, 0.0], [0] * 10 + [2, 0, 2, 0, 2, 0.0]])
    ses = fc.ses(y, 0.3)
    # the late series' level starts at its first observation, not at a zero
    assert ses.forecast[0] > ses.forecast[1]
    assert np.isnan(ses.fitted[0, :11]).all()


# -- demand distribution ------------------------------------------------------------------------


def test_variance_law_fit_recovers_known_parameters() -> None:
    # draws from scipy.stats.nbinom with variance a * mu^b
    from scipy import stats

    rng = np.random.default_rng(0)
    mu = rng.gamma(1.2, 1.5, size=20_000) + 0.05
    a, b = 2.5, 1.2
    var = np.maximum(a * mu**b, mu * 1.0001)
    p = mu / var
    d = stats.nbinom.rvs(mu * p / (1 - p), p, random_state=rng)
    a_hat, b_hat = fc.fit_variance_law(d, mu)
    assert a_hat == pytest.approx(a, rel=0.08)
    assert b_hat == pytest.approx(b, abs=0.05)


def test_capped_variance_law_is_the_likelihood_maximum_at_the_cap() -> None:
    """The default law caps the exponent (LawOptions.b_max, chosen by cross-validation).
    Counts drawn from scipy.stats.nbinom with b = 1.4 above the cap: the capped fit sits at
    the cap, and its a maximises the negative binomial likelihood at that b, the reference
    being scipy.stats.nbinom.logpmf maximised over a by scipy.optimize."""
    from scipy import optimize, stats

    from inventory.forecast.uncertainty import LawOptions

    rng = np.random.default_rng(4)
    mu = rng.gamma(1.2, 1.5, size=20_000) + 0.05
    var = np.maximum(2.0 * mu**1.4, mu * 1.0001)
    p = mu / var
    d = stats.nbinom.rvs(mu * p / (1 - p), p, random_state=rng)
    cap = LawOptions().b_max
    assert cap < 1.4
    a_hat, b_hat = fc.fit_variance_law(d, mu, b_bounds=(0.5, cap))
    assert b_hat == pytest.approx(cap, abs=1e-6)

    def nll(log_a: float) -> float:
        v = np.maximum(np.exp(log_a) * mu**cap, mu * (1.0 + 1e-6))
        q = mu / v
        return -float(stats.nbinom.logpmf(d, mu * q / (1 - q), q).sum())

    ref = optimize.minimize_scalar(nll, bounds=(np.log(1e-3), np.log(1e3)), method="bounded",
                                   options={"xatol": 1e-8})
    assert a_hat == pytest.approx(float(np.exp(ref.x)), rel=1e-3)
    assert fc.fit_variance_law(d, mu)[1] == pytest.approx(1.4, abs=0.05)  # uncapped


def test_own_spread_is_each_series_ratio_of_errors_to_the_law() -> None:
    """Each part's own share of the spread (LawOptions.own_weight, chosen by
    cross-validation in benchmarks/forecast_shape_cv.py). Reference 1: pandas' groupby sums
    of squared errors and of the law's variances, the ratio clipped and raised to the
    weight. Reference 2: counts drawn from scipy.stats.nbinom, half the series with three
    times the law's variance: the recovered ratios (weight 1) differ by about 3."""
    import pandas as pd
    from scipy import stats

    from inventory.forecast.uncertainty import own_spread

    rng = np.random.default_rng(11)
    n, per = 40, 400
    who = np.repeat(np.arange(n), per).astype(np.int32)
    mu = rng.gamma(2.0, 1.0, size=who.size) + 0.1
    a_s, b_s = np.full(n, 2.0), np.full(n, 1.1)
    law = np.maximum(a_s[who] * mu**b_s[who], mu)
    boost = np.where(np.arange(n) < n // 2, 1.0, 3.0)
    var = law * boost[who]
    p = mu / var
    d = stats.nbinom.rvs(mu * p / (1 - p), p, random_state=rng).astype(float)

    frame = pd.DataFrame({"who": who, "err": (d - mu) ** 2, "law": law})
    sums = frame.groupby("who")[["err", "law"]].sum()
    expected = np.clip(sums["err"] / sums["law"], 0.05, 20.0).to_numpy() ** 0.3
    got = own_spread(d, mu, who, (a_s, b_s), 0.3)
    np.testing.assert_allclose(got, expected, rtol=1e-12)

    full = own_spread(d, mu, who, (a_s, b_s), 1.0)
    ratio = np.median(full[n // 2:]) / np.median(full[: n // 2])
    assert ratio == pytest.approx(3.0, rel=0.25)
    # a series without pairs keeps the law
    assert own_spread(d, mu, who, (np.full(n + 1, 2.0), np.full(n + 1, 1.1)), 0.3)[n] == 1.0


def test_own_weight_zero_is_the_law_alone() -> None:
    """With own_weight 0 every sold part's ratio is the law's a (k m)^(b - 1) at its
    forecast; with the default each part's ratio moves off it, more for the parts whose
    errors ran larger than the law said (the definition above)."""
    from inventory.forecast.uncertainty import LawOptions

    y = _intermittent(5, n=120, t=48)
    res = fc.fit_forecast(y)
    law_only = fc.fit_distribution(y, res, cover=2, hold=1, law=LawOptions(own_weight=0.0))
    a, b = law_only.a["pooled"], law_only.b["pooled"]
    m = res.mean(2).mean(axis=1)
    sold = (y > 0).any(axis=1)
    np.testing.assert_allclose(law_only.dist.vmr[sold],
                               np.maximum(a * np.power(2 * m[sold], b - 1.0), 1.0), rtol=1e-9)
    own = fc.fit_distribution(y, res, cover=2, hold=1)
    assert LawOptions().own_weight > 0
    np.testing.assert_allclose(own.dist.mean, law_only.dist.mean)
    assert not np.allclose(own.dist.vmr[sold], law_only.dist.vmr[sold])


def test_fit_distribution_cold_start_and_mean() -> None:
    y = _intermittent(21, n=150, t=40)
    y[:3] = 0.0  # never sold
    y[3:6, 30:] = np.where(y[3:6, 30:] > 0, y[3:6, 30:], 1.0)
    res = fc.fit_forecast(y)
    fit = fc.fit_distribution(y, res, cover=2, hold=1)
    dist = fit.dist
    assert fit.cold_rate >= 0
    np.testing.assert_allclose(dist.mean[:3], fit.cold_rate)
    np.testing.assert_allclose(dist.mean[3:], res.mean(2).mean(axis=1)[3:])
    assert np.all(dist.vmr >= 1.0)
    assert set(fit.a) >= {"intermittent"} or "pooled" in fit.a


def test_chunked_fit_is_the_fit_of_each_interleaved_chunk() -> None:
    """Bounded memory (issue 14 item 2): above ``chunk_series`` the series are fitted in
    interleaved chunks. Each series gets exactly what a plain fit of its own chunk gives
    (the reference: fit_forecast on that chunk's rows, with chunking off), in input order."""
    y = _intermittent(5, n=90, t=36)
    pos = np.arange(36) % 12
    opt = fc.FitOptions(horizon=6, chunk_series=40)
    whole = fc.fit_forecast(y, season_pos=pos, options=opt)
    assert whole.level.shape == (90,) and whole.origin_paths.shape[1] == 90
    for j in range(3):  # 90 series in chunks of at most 40: 3 chunks, rows j, j + 3, ...
        rows = np.arange(j, 90, 3)
        alone = fc.fit_forecast(y[rows], season_pos=pos,
                                options=fc.FitOptions(horizon=6, chunk_series=0))
        np.testing.assert_array_equal(whole.level[rows], alone.level)
        np.testing.assert_array_equal(whole.method[rows], alone.method)
        np.testing.assert_array_equal(whole.origin_paths[:, rows], alone.origin_paths)
        np.testing.assert_array_equal(whole.classification.label[rows],
                                      alone.classification.label)
    # the distribution fit takes the merged result like any other
    dist = fc.fit_distribution(y, whole, cover=2, hold=1).dist
    assert len(dist) == 90
