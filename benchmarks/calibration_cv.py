"""Cross-validation of the fill calibration's choices (issue 14 items 0 and 1).

    python benchmarks/calibration_cv.py [--csv FILE] [--inner 1 2 3] [--splits 5]

Data: ../shared/data/carparts_dev.csv (override with --csv or INVENTORY_CARPARTS_CSV);
skipped with a message when absent. Outer origins whose 6 scored months end before month 43
(ends 35, 37, 39, 41, 43), so none of the months that ``forecast_calibration.py`` scores
(43-50) is used; on each, ``--splits`` random splits of the series into halves (seeded).
For each half: the forecast and distribution fitted on the training months, the
asked-to-achieved curve learned on ``--inner`` inner origins inside them
(:func:`inventory.ordering.calibration.learn_fill_calibration`), then, for each shrinkage
weight w, the policy asked for 90 / 95 / 98 % through the shrunk curve and simulated on the
scored months. Printed: mean |achieved - promised| summed over the three targets (points),
the share of (origin, half) units on which w beats the full inversion (w = 1) with one
inner origin, and the mean achieved per target. The library's default
(``BacktestSetup.calibration_weight``) was chosen from this table; see
inventory/ordering/calibration.py.
"""

from __future__ import annotations

import os

for _var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

import argparse  # noqa: E402
import sys  # noqa: E402
import time  # noqa: E402
from dataclasses import replace  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

import forecast_calibration as fcal  # noqa: E402

from inventory.ordering import backtest as bt  # noqa: E402
from inventory.ordering.calibration import learn_fill_calibration  # noqa: E402

DEFAULT_CSV = ROOT.parent / "shared" / "data" / "carparts_dev.csv"
H = 6
ENDS = fcal.EARLY_ENDS
TARGETS = (0.90, 0.95, 0.98)
WEIGHTS = (0.0, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9, 1.0)


def one_unit(sub: np.ndarray, pos: np.ndarray, setup: bt.BacktestSetup
             ) -> dict[float, list[float]]:
    """Achieved fill per weight (one per target) for one half at one outer origin."""
    train, test = sub[:, :-H], sub[:, -H:]
    p = pos[:-H]
    dist = bt._fit(train, p, setup).dist.dist

    def inner(history: np.ndarray, end: int):
        return bt._fit(history, p[:end], setup).dist.dist

    cal = learn_fill_calibration(train, inner, setup)
    out: dict[float, list[float]] = {}
    for w in WEIGHTS:
        shrunk = replace(cal, weight=w)
        got = []
        for f in TARGETS:
            lv = bt.policy_levels(dist, shrunk.ask(f), allocation=setup.allocation,
                                  lead_time=setup.lead_time, review_period=setup.review_period)
            sim = bt.simulate_order_up_to(lv, test)
            got.append(float(sim.served.sum() / sim.demand.sum()))
        out[w] = got
    return out


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--csv", default=os.environ.get("INVENTORY_CARPARTS_CSV", str(DEFAULT_CSV)))
    ap.add_argument("--inner", type=int, nargs="+", default=[1])
    ap.add_argument("--splits", type=int, default=5)
    args = ap.parse_args(argv)
    data = fcal.read_series(args.csv)
    if data is None:
        return 0
    y, pos = data
    halves = fcal.random_halves(y.shape[0], args.splits, seed=7)
    t0 = time.perf_counter()
    base: np.ndarray | None = None
    for k in args.inner:
        setup = bt.BacktestSetup(horizon=H, allocation="uniform", calibration_origins=k)
        units = [one_unit(y[idx, :e], pos[:e], setup) for e in ENDS for idx in halves]
        print(f"\n{k} inner origin(s), {len(units)} (origin, half) units, "
              f"{time.perf_counter() - t0:.0f} s so far")
        print(f"| w | mean sum abs error (points) | beats w = 1, {args.inner[0]} inner origin(s) | "
              "mean achieved "
              "90 / 95 / 98 % |")
        print("|---|---|---|---|")
        errs = {w: np.asarray([100 * sum(abs(a - f) for a, f in zip(u[w], TARGETS, strict=True))
                               for u in units]) for w in WEIGHTS}
        if base is None:
            base = errs[1.0]  # the full inversion with the first --inner count
        for w in WEIGHTS:
            ach = np.mean([u[w] for u in units], axis=0)
            print(f"| {w:.1f} | {errs[w].mean():.2f} | {np.mean(errs[w] < base):.2f} | "
                  + " / ".join(f"{100 * a:.2f}" for a in ach) + " |")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
