"""The forecast use case on small shops built inline (SQLite and PostgreSQL).

Outside checks:
- Seasonal indices: statsmodels' ``seasonal_decompose(model="multiplicative")`` (the
  classical decomposition: centred 2x12 moving average, ratios, mean per month, normalised
  to mean 1), and the same ratio-to-moving-average steps written out by hand (classical
  multiplicative decomposition as in Makridakis, Wheelwright and Hyndman, "Forecasting:
  Methods and Applications", ch. 3; recalled from memory).
- Quantiles: scipy.stats.nbinom with n = mean / (vmr - 1), p = 1 / vmr.
- Demand series: hand tallies of the jobs the test books (kits exploded through their
  bill of materials: the tiny catalog's K-TST = 2 x WP-32 + 1 x OR-214).
"""

from __future__ import annotations

from datetime import UTC, date, datetime, time

import numpy as np
import pytest
from scipy import stats
from sqlmodel import Session

from inventory.core.db import transaction
from inventory.forecast import service as F
from inventory.forecast.data import load_history
from inventory.history.bulk_jobs import record_jobs
from inventory.history.jobs import JobItem, JobSpec
from inventory.stock import ledger

# jobs per calendar month (Jan..Dec): a spring peak and a winter trough
SEASON = [1, 2, 3, 5, 6, 5, 4, 3, 3, 2, 1, 1]


def _month_add(d: date, k: int) -> date:
    m = d.month - 1 + k
    return date(d.year + m // 12, m % 12 + 1, 1)


def shop_jobs(months: int, start: date = date(2024, 1, 1)) -> list[JobSpec]:
    """A deterministic job history: SEASON jobs a month on six returning forks; every third
    job an air-spring service (kit + a loose O-ring), every fifth lower-leg job done from
    loose wipers instead of the kit."""
    jobs = []
    n = 0
    for k in range(months):
        first = _month_add(start, k)
        for j in range(SEASON[first.month - 1]):
            n += 1
            day = first.replace(day=2 + 4 * j)
            fork = f"F-{n % 6:03d}"
            if n % 3 == 0:
                items = (JobItem("K-TST", 1), JobItem("OR-214", 1))
                level = "air_spring"
            elif n % 5 == 0:
                items = (JobItem("WP-32", 2),)
                level = "lower_leg"
            else:
                items = (JobItem("K-TST", 1),)
                level = "lower_leg"
            jobs.append(JobSpec(f"J-{n:04d}", day, "XC-32", level, items, hours=40,
                                fork_ref=fork))
    return jobs


def build(engine, months: int, start: date = date(2024, 1, 1)) -> list[JobSpec]:
    jobs = shop_jobs(months, start)
    ts = datetime.combine(start, time(8), tzinfo=UTC)
    with transaction(engine) as s:
        for code, qty, cost in (("K-TST", 400, "40.00"), ("WP-32", 900, "6.50"),
                                ("OR-214", 900, "0.25")):
            ledger.receive(s, ledger.Receipt(code, qty, cost, received=start, ts=ts))
        record_jobs(s, jobs)
    return jobs


def tally(jobs: list[JobSpec], months: int, start: date = date(2024, 1, 1)) -> dict:
    """Hand counts per month: kits issued, loose wipers, loose O-rings, jobs."""
    out = {k: np.zeros(months) for k in ("kit", "wp", "or", "jobs")}
    for j in jobs:
        t = (j.day.year - start.year) * 12 + j.day.month - start.month
        out["jobs"][t] += 1
        for it in j.items:
            key = {"K-TST": "kit", "WP-32": "wp", "OR-214": "or"}[it.code]
            out[key][t] += it.qty
    return out


TODAY = date(2026, 7, 3)  # 30 complete months from January 2024


def test_series_by_part_kit_and_family_equal_hand_tallies(store) -> None:
    jobs = build(store, 30)
    want = tally(jobs, 30)
    with Session(store) as s:
        part = F.demand_outlook(s, F.ForecastRequest(TODAY, by="part", horizon=3))
        kit = F.demand_outlook(s, F.ForecastRequest(TODAY, by="kit", horizon=3))
        fam = F.demand_outlook(s, F.ForecastRequest(TODAY, by="family", horizon=3))
    assert part.codes == ["OIL-5", "OR-214", "WP-32"]  # every non-kit part, used or not
    wp = np.nan_to_num(part.history[part.codes.index("WP-32")])
    orr = np.nan_to_num(part.history[part.codes.index("OR-214")])
    np.testing.assert_allclose(wp, 2 * want["kit"] + want["wp"])  # K-TST has 2 wipers
    np.testing.assert_allclose(orr, want["kit"] + want["or"])  # ... and 1 O-ring
    assert kit.codes == ["K-TST"]
    np.testing.assert_allclose(kit.history[0], want["kit"])
    assert fam.codes == ["XC-32"] and fam.kinds == ["family"]
    np.testing.assert_allclose(fam.history[0], want["jobs"])
    # the forecast runs from the month of "today" for the horizon
    assert str(part.periods[0]) == "2026-07-01"
    # a part never used: no demand, a zero forecast, and the pooled cold-start range
    i = part.codes.index("OIL-5")
    assert np.isnan(part.history[i]).all() or not np.nan_to_num(part.history[i]).any()
    assert part.result.classification.label[i] == "no demand"
    assert part.mean[i].sum() == 0.0


def test_seasonal_profile_from_pooled_jobs_matches_statsmodels_and_hand(store) -> None:
    sm = pytest.importorskip("statsmodels.tsa.seasonal")
    jobs = build(store, 30)
    with Session(store) as s:
        hist = load_history(s, until=date(2026, 6, 30))
    profile, reason = F.job_profile(hist)
    total = tally(jobs, 30)["jobs"]
    np.testing.assert_allclose(hist.jobs.sum(axis=0), total)
    # statsmodels: classical multiplicative decomposition; month 0 is January
    ref = sm.seasonal_decompose(total, model="multiplicative", period=12).seasonal[:12]
    np.testing.assert_allclose(profile, ref, rtol=1e-10)
    # the same by hand: centred 2x12 moving average, ratio, mean per month, mean 1
    ratios: dict[int, list[float]] = {m: [] for m in range(12)}
    for t in range(6, len(total) - 6):
        ma = (0.5 * total[t - 6] + total[t - 5:t + 6].sum() + 0.5 * total[t + 6]) / 12
        ratios[t % 12].append(total[t] / ma)
    raw = np.array([np.mean(ratios[m]) for m in range(12)])
    np.testing.assert_allclose(profile, raw / raw.mean(), rtol=1e-12)
    assert profile[4] > 1.2 > 0.6 > profile[11]  # May peak, December trough
    assert reason.startswith("seasonal profile")


def test_short_history_runs_without_a_season(store) -> None:
    build(store, 8)
    with Session(store) as s:
        rep = F.forecast_items(s, F.ForecastRequest(date(2024, 9, 10), by="part", horizon=4))
    assert not rep.season.used
    assert "8 months of history" in rep.season.reason
    assert np.allclose(rep.season.profile, 1.0)
    wp = next(x for x in rep.series if x.code == "WP-32")
    assert len(wp.forecast) == 4 and all(x > 0 for x in wp.forecast)
    assert len(wp.history) == 8
    # no season and no installed base: a flat forecast (one level for every month)
    with Session(store) as s:
        flat = F.forecast_items(s, F.ForecastRequest(date(2024, 9, 10), by="part", horizon=4),
                                settings=F.ForecastSettings(installed_base=False))
    wp = next(x for x in flat.series if x.code == "WP-32")
    assert flat.installed_base is None
    assert max(wp.forecast) == pytest.approx(min(wp.forecast))


def test_ranges_are_negative_binomial_quantiles_as_scipy(store) -> None:
    build(store, 30)
    with Session(store) as s:
        out = F.demand_outlook(s, F.ForecastRequest(TODAY, by="part", horizon=6))
        rep = F.forecast_items(s, F.ForecastRequest(TODAY, by="part", horizon=6))
    i = out.codes.index("WP-32")
    sf = next(x for x in rep.series if x.code == "WP-32")
    vmr = float(out.dist.vmr[i])
    assert vmr > 1.0
    for j in range(6):
        mean = out.mean[i, j]
        n, p = mean / (vmr - 1.0), 1.0 / vmr  # scipy's parameterisation
        assert sf.low[j] == stats.nbinom.ppf(0.1, n, p)
        assert sf.high[j] == stats.nbinom.ppf(0.9, n, p)
        assert sf.forecast[j] == pytest.approx(mean)
    # over lead time + review (2 months): mean = the first two months' forecast
    cover_mean = out.mean[i, :2].sum()
    assert sf.cover_mean == pytest.approx(cover_mean)
    n, p = cover_mean / (vmr - 1.0), 1.0 / vmr
    assert (sf.cover_low, sf.cover_median, sf.cover_high) == tuple(
        int(stats.nbinom.ppf(q, n, p)) for q in (0.1, 0.5, 0.9))
    # the planner's per-period view: any cover, mean = average of the path over it
    d3 = out.per_period(3.0)
    assert d3.mean[i] == pytest.approx(out.mean[i, :3].mean())
    assert d3.over(3.0).mean[i] == pytest.approx(out.mean[i, :3].sum())
    half = out.per_period(1.5)
    assert half.mean[i] == pytest.approx((out.mean[i, 0] + 0.5 * out.mean[i, 1]) / 1.5)
    with Session(store) as s:
        codes, dist, result = F.lead_time_demand(s, TODAY, 2.0, by="part")
    assert codes == out.codes and len(dist) == len(codes)
    assert dist.mean[i] == pytest.approx(out.dist.mean[i], rel=1e-9)
    assert result.classification.label.shape == (len(codes),)


def test_weekly_buckets_add_up_to_the_monthly_totals(store) -> None:
    jobs = build(store, 14)
    want = tally(jobs, 14)
    with Session(store) as s:
        hist = load_history(s, until=date(2025, 2, 28), freq="W")
        rep = F.forecast_items(s, F.ForecastRequest(date(2025, 3, 5), by="kit", freq="W",
                                                   horizon=5))
    k = hist.items.index("K-TST")
    # every job day is a 2nd/6th/10th/... of a month: each week lies in one month here
    assert np.nansum(hist.values[k]) == want["kit"].sum()
    weeks = hist.periods
    assert ((weeks.astype("datetime64[D]").astype(np.int64) + 3) % 7 == 0).all()  # Mondays
    assert rep.freq == "W" and len(rep.forecast_periods) == 5
    assert rep.forecast_periods[0] == date(2025, 3, 3)  # the Monday of "today"'s week
    assert rep.installed_base is None  # monthly only
    # the weekly forecast in the trough is below the weekly average of the peak
    assert rep.series[0].forecast[0] > 0


def test_installed_base_is_judged_and_reported(store) -> None:
    build(store, 30)
    with Session(store) as s:
        rep = F.forecast_items(s, F.ForecastRequest(TODAY, by="kit", horizon=6))
    ibi = rep.installed_base
    assert ibi is not None
    assert 0.0 <= ibi.weight <= 1.0 and ibi.reason
    assert ibi.forks == 6
    assert 0.0 < ibi.return_probability <= 1.0
    # the score of the chosen weight is never worse than the time series alone
    assert ibi.rmsse_blend <= ibi.rmsse_ts + 1e-12
    d = rep.to_dict()
    assert set(d) >= {"series", "season", "installed_base", "forecast_periods", "by"}
    assert d["series"][0]["class"] in {"smooth", "erratic", "intermittent", "lumpy",
                                       "no demand"}
