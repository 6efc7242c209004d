"""Benchmark: our forecast + order-up-to policy against statsforecast on real spare-parts demand.

    python benchmarks/forecast_vs_statsforecast.py [--csv FILE] [--horizon 6] [--strict]

Data: ../shared/data/carparts_dev.csv next to the repository (override with --csv or the
INVENTORY_CARPARTS_CSV environment variable); skipped with a message when absent.

Protocol (issue 5, item 8), the same simulator for every row
(:func:`inventory.ordering.backtest.simulate_order_up_to`): train on all but the last ``horizon``
months, one order-up-to level per series, monthly review, lead time 1 month, backorders,
whole units, on hand starting at the level. Pooled fill = units served from the shelf /
units demanded; on hand = average end-of-month units per series per month.

- Ours: :func:`inventory.ordering.backtest.run_backtests` at 90/95/98 % (forecast chosen by rolling
  origin, negative binomial demand over lead time + review, fill-rate-exact levels). The
  headline (and the fill targets checked) is ``allocation="uniform"``: one per-part target
  set so the expected POOLED fill meets the asked rate, since the pooled fill rate is what
  the issue measures; the per-part allocation (each part's own smallest level reaching the
  target) is printed below it for comparison. ``inventory backtest`` uses the same default.
- statsforecast's SimpleExponentialSmoothingOptimized ("SES"), TSB(alpha_d=0.1,
  alpha_p=0.1), IMAPA and CrostonSBA: their mean forecast, sd from their in-sample
  one-step residuals (ddof=1), S = ceil(2 mu + z sd sqrt(2)), z = 1.645; then z tuned after
  the fact on the test months to the smallest value reaching 95 % achieved fill.

Targets (issue 5) are checked and printed as PASS/FAIL. Timings: both libraries run
single-threaded BLAS (set below, before numpy loads), as the arrays are small and thread
start-up only adds noise on a shared machine; statsforecast is timed fitting SES, TSB and
IMAPA together without fitted values (its fastest path), after one warm-up call each.
"""

from __future__ import annotations

import os

for _var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

import argparse  # noqa: E402
import sys  # noqa: E402
import time  # noqa: E402
import warnings  # noqa: E402
from dataclasses import dataclass, replace  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from inventory.forecast import accuracy  # noqa: E402
from inventory.forecast import methods as fc  # noqa: E402
from inventory.ordering import backtest as bt  # noqa: E402
from inventory.ordering import policy  # noqa: E402

DEFAULT_CSV = ROOT.parent / "shared" / "data" / "carparts_dev.csv"
LEAD_TIME = 1
REVIEW = 1
FILLS = (0.90, 0.95, 0.98)


@dataclass
class Row:
    method: str
    asked: str
    fill: float
    on_hand: float
    rmsse: float
    seconds: float


def _fmt(r: Row) -> str:
    return (f"| {r.method} | {r.asked} | {100 * r.fill:.1f} % | {r.on_hand:.2f} | "
            f"{r.rmsse:.4f} | {r.seconds:.2f} |")


def _long_frame(train: np.ndarray):
    import pandas as pd

    n, t = train.shape
    return pd.DataFrame({
        "unique_id": np.repeat(np.arange(n), t),
        "ds": np.tile(np.arange(1, t + 1), n),
        "y": train.ravel(),
    })


def _sf_models():
    from statsforecast.models import (
        IMAPA,
        TSB,
        CrostonSBA,
        SimpleExponentialSmoothingOptimized,
    )

    return {
        "SES": SimpleExponentialSmoothingOptimized(alias="SES"),
        "TSB": TSB(alpha_d=0.1, alpha_p=0.1, alias="TSB"),
        "IMAPA": IMAPA(alias="IMAPA"),
        "CrostonSBA": CrostonSBA(alias="CrostonSBA"),
    }


def _sf_run(frame, models, h: int, fitted: bool):
    from statsforecast import StatsForecast

    sf = StatsForecast(models=list(models), freq=1, n_jobs=1)
    out = sf.forecast(df=frame, h=h, fitted=fitted)
    return sf, out


def _normal_levels(mu: np.ndarray, sd: np.ndarray, z: float) -> np.ndarray:
    cover = LEAD_TIME + REVIEW
    return np.maximum(np.ceil(mu * cover + z * sd * np.sqrt(cover)), 0.0)


def _simulate(levels: np.ndarray, test: np.ndarray) -> tuple[float, float]:
    sim = bt.simulate_order_up_to(levels, test, lead_time=LEAD_TIME, review_period=REVIEW)
    return float(sim.served.sum() / sim.demand.sum()), float(sim.on_hand.mean())


def _tune(fill_at, lo: float, hi: float, target: float = 0.95, iters: int = 40) -> float:
    """Smallest parameter in [lo, hi] whose achieved fill reaches ``target`` (bisection)."""
    for _ in range(iters):
        mid = 0.5 * (lo + hi)
        if fill_at(mid) >= target:
            hi = mid
        else:
            lo = mid
    return hi


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--csv", default=os.environ.get("INVENTORY_CARPARTS_CSV", str(DEFAULT_CSV)))
    ap.add_argument("--horizon", type=int, default=6)
    ap.add_argument("--strict", action="store_true", help="exit 1 when a target fails")
    args = ap.parse_args(argv)
    path = Path(args.csv)
    if not path.exists():
        print(f"skipped: {path} not found (set --csv or INVENTORY_CARPARTS_CSV)")
        return 0
    try:
        import statsforecast  # noqa: F401
    except ImportError:
        print("skipped: statsforecast is not installed (pip install -e '.[test]')")
        return 0
    warnings.filterwarnings("ignore")

    table = bt.read_wide_csv(path)
    y, h = table.values, args.horizon
    n, t_len = y.shape
    train, test = y[:, :-h], y[:, -h:]
    pos = table.season_pos()
    print(f"# {path.name}: {n} series, {t_len} months; train {t_len - h}, test {h}; "
          f"lead time {LEAD_TIME}, review {REVIEW}\n")

    # warm-up both libraries on a small slice (imports, first-call set-up)
    setup = bt.BacktestSetup(horizon=h, lead_time=LEAD_TIME, review_period=REVIEW,
                             allocation="uniform")
    bt.run_backtest(y[:50], setup=setup, season_pos=pos)
    frame_small = _long_frame(train[:50])
    _sf_run(frame_small, _sf_models().values(), h, fitted=False)

    # -- ours ---------------------------------------------------------------------------------
    t0 = time.perf_counter()
    ours95 = bt.run_backtest(y, table.names, fill_rate=0.95, setup=setup, season_pos=pos)
    whole = time.perf_counter() - t0
    uniform = bt.run_backtests(y, table.names, fill_rates=FILLS, setup=setup, season_pos=pos)
    per_part = bt.run_backtests(y, table.names, fill_rates=FILLS, season_pos=pos,
                                setup=replace(setup, allocation="part"))
    rows = [Row("ours (uniform target, pooled fill; headline)", f"{int(100 * r.fill_target)} %",
                r.fill_rate, r.avg_on_hand, r.rmsse, r.seconds) for r in uniform]
    rows += [Row("ours (per-part levels)", f"{int(100 * r.fill_target)} %", r.fill_rate,
                 r.avg_on_hand, r.rmsse, r.seconds) for r in per_part]

    # ours with the per-part target tuned after the fact to 95 % achieved (same hindsight
    # as the tuned statsforecast rows)
    res = fc.fit_forecast(train, season_pos=None if pos is None else pos[:-h],
                          options=fc.FitOptions(horizon=h))
    dist = fc.fit_distribution(train, res, cover=LEAD_TIME + REVIEW, hold=h).dist

    def ours_fill(target: float) -> float:
        return _simulate(policy.order_up_to_levels(dist, target).astype(float), test)[0]

    t_star = _tune(ours_fill, 0.5, 0.9999, iters=25)
    f_star, oh_star = _simulate(policy.order_up_to_levels(dist, t_star).astype(float), test)
    rows.append(Row("ours, target tuned to 95 % achieved (HINDSIGHT)", f"95 % (t = {t_star:.3f})", f_star,
                    oh_star, ours95.rmsse, ours95.seconds))

    # -- statsforecast --------------------------------------------------------------------
    frame = _long_frame(train)
    models = _sf_models()
    trio = [models["SES"], models["TSB"], models["IMAPA"]]
    _sf_run(frame, trio, h, fitted=False)  # warm-up on the full frame
    t0 = time.perf_counter()
    _sf_run(frame, trio, h, fitted=False)
    sf_trio = time.perf_counter() - t0
    t0 = time.perf_counter()
    _sf_run(frame, trio, h, fitted=True)
    sf_trio_fitted = time.perf_counter() - t0

    sf_rmsse: dict[str, float] = {}
    sf_tuned: dict[str, float] = {}
    for name, model in models.items():
        t0 = time.perf_counter()
        sf, out = _sf_run(frame, [model], h, fitted=True)
        secs = time.perf_counter() - t0
        mu = out[name].to_numpy().reshape(n, h)[:, 0]
        fitted = sf.forecast_fitted_values()[name].to_numpy().reshape(n, -1)
        resid = train - fitted
        sd = np.nan_to_num(np.nanstd(resid, axis=1, ddof=1))
        r = float(np.nanmean(accuracy.rmsse(test, np.repeat(mu[:, None], h, 1), train)))
        sf_rmsse[name] = r
        f, oh = _simulate(_normal_levels(mu, sd, 1.645), test)
        rows.append(Row(f"statsforecast {name} + normal SS", "95 % (z = 1.645)", f, oh, r, secs))

        def fill_z(z: float, mu: np.ndarray = mu, sd: np.ndarray = sd) -> float:
            return _simulate(_normal_levels(mu, sd, z), test)[0]

        z_star = _tune(fill_z, 0.0, 10.0)
        f, oh = _simulate(_normal_levels(mu, sd, z_star), test)
        sf_tuned[name] = oh
        rows.append(Row(f"statsforecast {name}, z tuned to 95 % achieved (HINDSIGHT)",
                        f"95 % (z = {z_star:.2f})", f, oh, r, secs))

    print("| method | asked fill | achieved fill | avg on-hand | RMSSE | seconds |")
    print("|---|---|---|---|---|---|")
    for r in rows:
        print(_fmt(r))
    print()
    print(f"ours, whole backtest (fit + levels + simulation + measures), 95 %: {whole:.2f} s; "
          f"statsforecast SES + TSB + IMAPA: {sf_trio:.2f} s "
          f"({sf_trio_fitted:.2f} s with in-sample fitted values)")
    d95 = ours95.to_dict()
    print(f"our classes {d95['classes']}; methods per class {d95['class_choice']}; "
          f"seasonal profile {'on' if d95['seasonal'] else 'off'}")
    print(f"our quantile calibration (share of 2-month test windows at or below the "
          f"p-quantile): {d95['calibration']}; promised fill at 95 %: "
          f"{100 * ours95.expected_fill:.1f} %\n")

    # -- targets ------------------------------------------------------------------------------
    checks: list[tuple[str, bool, str]] = []
    for r in uniform:
        lo, hi = r.fill_target - 0.01, r.fill_target + 0.02
        ok = lo - 1e-12 <= r.fill_rate <= hi + 1e-12
        checks.append((f"asked {100 * r.fill_target:.0f} % -> achieved within -1/+2 points",
                       ok, f"{100 * r.fill_rate:.2f} %"))
    best_sf = min(sf_tuned, key=lambda k: sf_tuned[k])
    limit = 0.85 * sf_tuned[best_sf]
    checks.append(("on-hand at 95 % achieved <= 0.85 x best statsforecast (tuned)",
                   oh_star <= limit,
                   f"{oh_star:.2f} vs 0.85 x {sf_tuned[best_sf]:.2f} ({best_sf}) = {limit:.2f}; "
                   f"at 95 % asked: {uniform[1].avg_on_hand:.2f}"))
    best_r = min(sf_rmsse, key=lambda k: sf_rmsse[k])
    checks.append(("RMSSE no worse than the best statsforecast model",
                   ours95.rmsse <= sf_rmsse[best_r] + 1e-12,
                   f"{ours95.rmsse:.4f} vs {sf_rmsse[best_r]:.4f} ({best_r})"))
    checks.append(("whole backtest <= 2 s", whole <= 2.0, f"{whole:.2f} s"))
    checks.append(("whole backtest <= 2 x statsforecast SES+TSB+IMAPA", whole <= 2 * sf_trio,
                   f"{whole:.2f} s vs 2 x {sf_trio:.2f} s"))
    for label, ok, detail in checks:
        print(f"{'PASS' if ok else 'FAIL'}  {label}: {detail}")
    failed = [c for c in checks if not c[1]]
    return 1 if (failed and args.strict) else 0


if __name__ == "__main__":
    raise SystemExit(main())
