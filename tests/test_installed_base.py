"""Installed base: due dates, full-service state, return model and the blend, on small
hand-made histories whose expected values are worked out by hand in each test.

Service intervals are the trade's common practice (REFERENCE.md section 9: lower legs
about every 50 ride hours, full service about every 100 to 200 hours or yearly; common
practice). The blend is scored by RMSSE, whose definition (Makridakis, Spiliotis and
Assimakopoulos 2022, the M5 competition: sqrt of the mean squared error over the in-sample
mean squared one-step change) is re-computed here by hand.
"""

from __future__ import annotations

from datetime import date, timedelta

import numpy as np
import pytest

from inventory.core.model import KitSpec, ServiceLevel
from inventory.forecast import installed_base as ib

FLAT = ib.ReturnOptions(prior_days=0.0)  # a fork's rate from its own intervals only


def _due(t: ib.Timeline, fork: str) -> date:
    i = np.flatnonzero((t.fork == fork) & t.last)[0]
    return date.fromisoformat(str(t.due[i]))


def _flag(t: ib.Timeline, fork: str) -> int:
    return int(t.flag[np.flatnonzero((t.fork == fork) & t.last)[0]])


def test_due_date_from_the_forks_own_ride_rate() -> None:
    v = ib.Visits.from_records([
        ("F-A", "XC-32", "2024-01-10", "lower_leg", 30),
        ("F-A", "XC-32", "2024-04-09", "lower_leg", 45),  # 45 h in 90 days = 0.5 h/day
        ("F-B", "XC-32", "2024-02-01", "lower_leg", None),
        ("F-B", "XC-32", "2024-03-02", "lower_leg", 60),  # 60 h in 30 days = 2 h/day
    ])
    t = ib.service_timeline(v, cutoff="2025-01-01", options=FLAT)
    # hand: 50 h / 0.5 h a day = 100 days after 2024-04-09; 50 / 2 = 25 days after 03-02
    assert _due(t, "F-A") == date(2024, 4, 9) + timedelta(days=100) == date(2024, 7, 18)
    assert _due(t, "F-B") == date(2024, 3, 2) + timedelta(days=25)
    # pooled rate: median of the interval rates 0.5 and 2.0 = 1.25 h/day; a first visit
    # (no interval yet) rides like that: 50 / 1.25 = 40 days
    assert t.pooled_rate == pytest.approx(1.25)
    first = np.flatnonzero((t.fork == "F-A") & ~t.last)[0]
    assert str(t.due[first]) == str(date(2024, 1, 10) + timedelta(days=40))


def test_credibility_weight_of_the_pooled_rate() -> None:
    v = ib.Visits.from_records([
        ("F-A", "XC-32", "2024-01-10", "lower_leg", 30),
        ("F-A", "XC-32", "2024-04-09", "lower_leg", 45),
        ("F-B", "XC-32", "2024-02-01", "lower_leg", None),
        ("F-B", "XC-32", "2024-03-02", "lower_leg", 60),
    ])
    t = ib.service_timeline(v, cutoff="2025-01-01", options=ib.ReturnOptions(prior_days=120))
    # hand: (45 + 1.25 * 120) / (90 + 120) = 195 / 210 h/day; 50 h take 53.85 days -> the
    # 54th day after the visit is the first whose start has 50 riding hours behind it
    rate = (45 + 1.25 * 120) / (90 + 120)
    assert t.rate[np.flatnonzero((t.fork == "F-A") & t.last)[0]] == pytest.approx(rate)
    assert _due(t, "F-A") == date(2024, 4, 9) + timedelta(days=54)


def test_seasonal_riding_clock() -> None:
    # riding weights: January-June 0.5 a day, July-December 1.5 a day (mean 1)
    season = [0.5] * 6 + [1.5] * 6
    v = ib.Visits.from_records([
        ("F-S", "TR-34", "2024-05-01", "lower_leg", None),
        ("F-S", "TR-34", "2024-06-01", "lower_leg", 15.5),  # May: 31 x 0.5 = 15.5 riding days
    ])
    t = ib.service_timeline(v, cutoff="2025-01-01", options=FLAT, season=season)
    assert t.rate[-1] == pytest.approx(1.0)  # 15.5 h over 15.5 riding days
    # hand: June gives 30 x 0.5 = 15 riding days; 35 more at 1.5 a day need 23.3 days, so
    # the start of 24 July has 49.5, the start of 25 July 51 >= 50
    assert _due(t, "F-S") == date(2024, 7, 25)


def test_full_service_due_by_hours_by_days_or_unknown() -> None:
    v = ib.Visits.from_records([
        # not due: 60 h since the air-spring service; at the due day 110 h < 150 and
        # 2024-08-17 - 2024-01-10 = 220 days < 365
        ("F-C", "TR-34", "2024-01-10", "air_spring", 20),
        ("F-C", "TR-34", "2024-05-09", "lower_leg", 60),
        # due by hours: 110 h since the air spring, +50 at the next visit = 160 >= 150
        ("F-E", "TR-34", "2024-01-01", "air_spring", 10),
        ("F-E", "TR-34", "2024-03-01", "lower_leg", 110),
        # due by days: 20 h in 303 days, next visit 758 days later, > 365 since the damper
        ("F-F", "EN-36", "2023-01-02", "damper", 40),
        ("F-F", "EN-36", "2023-11-01", "lower_leg", 20),
        # unknown: never seen with a full service
        ("F-G", "EN-36", "2024-02-01", "lower_leg", 30),
        ("F-G", "EN-36", "2024-05-01", "lower_leg", 40),
    ])
    t = ib.service_timeline(v, cutoff="2025-01-01", options=FLAT)
    assert _due(t, "F-C") == date(2024, 5, 9) + timedelta(days=100)
    assert _flag(t, "F-C") == ib.NOT_DUE
    assert _due(t, "F-E") == date(2024, 3, 1) + timedelta(days=28)  # 50 / (110 / 60) = 27.3
    assert _flag(t, "F-E") == ib.DUE
    assert _due(t, "F-F") == date(2023, 11, 1) + timedelta(days=758)  # 50 / (20 / 303) = 757.5
    assert _flag(t, "F-F") == ib.DUE
    assert _flag(t, "F-G") == ib.UNKNOWN
    # a shorter full interval makes F-C due: 110 h >= 100 h
    t2 = ib.service_timeline(v, cutoff="2025-01-01", options=FLAT,
                             intervals=ib.ServiceIntervals(full_hours=100))
    assert _flag(t2, "F-C") == ib.DUE


HISTORY = [
    # every interval rides 0.5 h/day, so the pooled rate is 0.5 and a first visit is due
    # 100 days later
    ("F-1", "XC-32", "2024-01-01", "lower_leg", 20),
    ("F-1", "XC-32", "2024-04-10", "lower_leg", 50),  # due 04-10 (Apr), came Apr: lag 0
    ("F-2", "XC-32", "2024-02-01", "lower_leg", 20),
    ("F-2", "XC-32", "2024-06-10", "lower_leg", 65),  # due 05-11 (May), came Jun: lag 1
    ("F-3", "XC-32", "2024-03-01", "lower_leg", 20),  # due 06-09 (Jun), never came back
]


def test_return_probability_and_lags_by_hand() -> None:
    v = ib.Visits.from_records(HISTORY)
    opt = ib.ReturnOptions(prior_days=0.0, min_visits=3)
    t = ib.service_timeline(v, cutoff="2026-01-01", options=opt)
    m = ib.fit_return_model(t, cutoff="2026-01-01", options=opt)
    # all five visits are due by Sep 2024, 12+ months before Jan 2026: outcome known.
    # Returns: F-1's first and F-2's first (2 of 5) -> p = 0.4; lags 0 and 1 half each
    assert m.n_visits == 5 and not m.fallback
    assert m.p == pytest.approx(0.4)
    assert m.lag_pmf([0, 1, 2, -1]) == pytest.approx([0.5, 0.5, 0.0, 0.0])
    assert m.lag_survival([0, 1, 2, -5]) == pytest.approx([1.0, 0.5, 0.0, 1.0])


def test_return_probabilities_bayes_by_hand() -> None:
    lags = np.arange(-12, 13)
    pmf = np.zeros(lags.size)
    pmf[lags == -1], pmf[lags == 0], pmf[lags == 1] = 0.2, 0.5, 0.3
    model = ib.ReturnModel(0.8, lags, pmf, {}, 10, False)
    c = 600
    got = ib.return_probabilities([c, c - 1, c + 2], c, 4, 0.8, model)
    # due this month: P(lag >= 0) = 0.8, so 1 - 0.8 + 0.8 * 0.8 = 0.84 is the chance of
    # "not back yet"; then 0.8 * 0.5 / 0.84 this month and 0.8 * 0.3 / 0.84 next month
    assert got[0] == pytest.approx([0.4 / 0.84, 0.24 / 0.84, 0.0, 0.0])
    # due last month: P(lag >= 1) = 0.3 -> denominator 0.2 + 0.24 = 0.44
    assert got[1] == pytest.approx([0.24 / 0.44, 0.0, 0.0, 0.0])
    # due in two months: nothing ruled out yet, so the plain p * lag
    assert got[2] == pytest.approx([0.0, 0.16, 0.4, 0.24])


def test_expected_returns_end_to_end_by_hand() -> None:
    v = ib.Visits.from_records(HISTORY)
    opt = ib.ReturnOptions(prior_days=0.0, min_visits=30, max_returns=1)
    f = ib.expected_returns(v, cutoff="2024-08-01", horizon=3, options=opt)
    # Visits due before Aug 2024 with 12 months to spare: none, so the fallback uses those
    # due before August: F-1 first (lag 0), F-2 first (lag 1), F-3 (no), F-1 second (due
    # 2024-07-19, no) -> p = 2/4, lags 0 and 1 half each.
    assert f.model.fallback and f.model.p == pytest.approx(0.5)
    # Last visits: F-1 due July (one month ago): P(lag >= 1) = 0.5, so August gets
    # 0.5 * 0.5 / (0.5 + 0.5 * 0.5) = 1/3. F-2 (2024-06-10) due 2024-09-18: September
    # 0.25, October 0.25. F-3 due June, two months ago: no lag that long -> 0.
    assert f.groups == [("XC-32", "lower_leg")]
    assert f.values[0] == pytest.approx([1 / 3, 0.25, 0.25])
    assert f.n_forks == 3


def test_renewal_adds_the_next_visit_within_the_horizon() -> None:
    v = ib.Visits.from_records(HISTORY)
    one = ib.expected_returns(v, cutoff="2024-08-01", horizon=8,
                              options=ib.ReturnOptions(prior_days=0.0, max_returns=1))
    two = ib.expected_returns(v, cutoff="2024-08-01", horizon=8,
                              options=ib.ReturnOptions(prior_days=0.0, max_returns=2))
    # F-1 back in August (1/3) is due again 100 days (3 months) later: November, lags 0/1
    # with p 0.5 -> 1/3 * 0.5 * 0.5 in November and in December
    extra = two.values[0] - one.values[0]
    assert extra[3] >= (1 / 3) * 0.25 - 1e-12
    assert extra[:3] == pytest.approx([0.0, 0.0, 0.0])
    assert (extra >= -1e-12).all()


def test_level_shares_follow_the_full_service_state() -> None:
    rows = []
    day = date(2022, 1, 1)
    for i in range(40):  # forks whose full service is due come back for it
        f = f"F-{i:03d}"
        rows += [(f, "TR-34", day, "air_spring", 10),
                 (f, "TR-34", day + timedelta(days=200), "lower_leg", 140),
                 (f, "TR-34", day + timedelta(days=260), "air_spring", 40)]
    v = ib.Visits.from_records(rows)
    opt = ib.ReturnOptions(prior_days=0.0, share_prior=0.0)
    t = ib.service_timeline(v, cutoff="2025-01-01", options=opt)
    m = ib.fit_return_model(t, cutoff="2025-01-01", options=opt)
    # after the lower-leg visit 140 h since the air spring -> due; all came for air_spring
    assert m.shares[("TR-34", ib.DUE)] == pytest.approx({"air_spring": 1.0})
    # after the air-spring visit 0 h and 200 days -> not due; all came for lower legs
    assert m.shares[("TR-34", ib.NOT_DUE)] == pytest.approx({"lower_leg": 1.0})


def test_first_visits_and_kit_rule() -> None:
    v = ib.Visits.from_records(HISTORY + [(None, "CL-34", "2024-06-20", "damper", None)])
    months = np.arange(np.datetime64("2024-01"), np.datetime64("2024-07"))
    groups = [("XC-32", "lower_leg"), ("CL-34", "damper")]
    new = ib.first_visit_counts(v, months, groups)
    # first visits: F-1 Jan, F-2 Feb, F-3 Mar; the job without a fork reference is new
    assert new.tolist() == [[1, 1, 1, 0, 0, 0], [0, 0, 0, 0, 0, 1]]
    kits = [KitSpec("K-LL", "XC-32", ServiceLevel.LOWER_LEG, (("W", 2),)),
            KitSpec("K-AS", "XC-32", ServiceLevel.AIR_SPRING, (("O", 1),))]
    u = ib.usage_from_kits(kits, [("XC-32", "lower_leg"), ("XC-32", "air_spring")],
                           ["K-AS", "K-LL", "W"])
    # an air-spring job opens the lower legs too (common practice): both kits
    assert u.tolist() == [[0, 1, 0], [1, 1, 0]]


def _rmsse_by_hand(actual, fc, hist) -> np.ndarray:
    out = []
    for a, f, h in zip(actual, fc, hist, strict=True):
        scale = np.mean(np.diff(h) ** 2)
        out.append(np.sqrt(np.mean((a - f) ** 2) / scale))
    return np.array(out)


def test_blend_weight_by_backtest() -> None:
    rng = np.random.default_rng(3)
    hist = [rng.poisson(5, (20, 24)).astype(float) for _ in range(3)]
    actual = [rng.poisson(5, (20, 6)).astype(float) for _ in range(3)]
    ts = [np.full((20, 6), 5.0) for _ in range(3)]
    good = [a + rng.normal(0, 0.3, a.shape) for a in actual]  # a signal that knows a lot
    bad = [np.full((20, 6), 12.0) for _ in range(3)]
    c = ib.choose_blend(actual, ts, good, hist)
    assert c.weight >= 0.8
    assert c.ts == pytest.approx(np.mean(np.concatenate(
        [_rmsse_by_hand(a, t, h) for a, t, h in zip(actual, ts, hist, strict=True)])))
    assert c.blend < c.ts
    d = ib.choose_blend(actual, ts, bad, hist)
    assert d.weight == 0.0 and d.blend == d.ts and "time series alone" in d.reason
    assert ib.choose_blend([], [], [], []).weight == 0.0


def test_blend_weights_per_class() -> None:
    rng = np.random.default_rng(5)
    n = 12
    labels = np.array(["smooth"] * 6 + ["lumpy"] * 6)
    hist = [rng.poisson(4, (n, 24)).astype(float) for _ in range(3)]
    actual = [rng.poisson(4, (n, 6)).astype(float) for _ in range(3)]
    ts = [np.full((n, 6), 4.0) for _ in range(3)]
    # the signal knows the smooth series and is wrong about the lumpy ones
    sig = [np.where((labels == "smooth")[:, None], a, 15.0) for a in actual]
    cb = ib.choose_blend_by_class(actual, ts, sig, hist, labels)
    assert cb.choices["smooth"].weight == 1.0
    assert cb.choices["lumpy"].weight == 0.0
    assert cb.weights.tolist() == [1.0] * 6 + [0.0] * 6
    assert cb.blend < cb.ts
    # a class below min_series takes the pooled weight
    few = ib.choose_blend_by_class(actual, ts, sig, hist, labels, min_series=7)
    assert few.choices == {} and (few.weights == few.pooled.weight).all()
