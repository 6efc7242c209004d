"""Cross-validation of a per-ABC-class fill split (issue 14 item 0): does giving each class
its own per-part target, chosen from fill-vs-stock curves measured inside training, hold less
stock at equal pooled fill than one target for all parts?

    python benchmarks/forecast_class_split_cv.py [--csv FILE] [--splits 5] [--seed 7]

Data: ../shared/data/carparts_dev.csv (override with --csv or INVENTORY_CARPARTS_CSV);
skipped with a message when absent. Outer origins whose 6 scored months end before month 43
(data cut at 35, 37, 39, 41, 43 months, as ``calibration_cv.py``), so none of the months
``forecast_calibration.py`` scores is used; on each, ``--splits`` random splits of the
series into halves (seeded). For each half:

- the forecast and distribution fitted on the training months (the outer fit);
- an inner fit on the training months but the last 6, its levels for a grid of per-part
  targets t (each part's smallest whole level with cycle fill >= t,
  :func:`inventory.ordering.policy.order_up_to_levels`) simulated on those 6 months: per
  ABC class (units over the last 12 months before the inner origin) the stock held and
  the units served and demanded at each t, i.e. each class's fill-vs-stock curve;
- for each pooled fill f of a sweep, the class targets (t_A, t_B, t_C) on the grid that hold
  the least stock on the inner window while its pooled fill reaches f ("split3"; "split2"
  ties t_A = t_B, fewer choices to overfit); those targets applied to the outer fit's
  distribution and simulated on the scored months;
- the current rule ("uniform": one per-part target, the pooled expected fill meeting the
  asked one, :func:`inventory.ordering.policy.pooled_order_up_to_levels`) swept the same way;
- whole-unit rounding: one per-part target swept, each level rounded to the nearest whole
  level in expected cycle fill instead of up ("nearest"; "nearest C" on class C only);
  parts whose forecast over lead time plus review is below a threshold left unstocked
  ("drop<threshold>", the rest swept with the uniform rule; "drop0.0" is uniform itself).

Both are read at 95.0 % ACHIEVED fill (linear interpolation over the sweep) and divided by
SES with z tuned in hindsight on the same half (``forecast_calibration.py``'s reference).
Printed per (origin, half): the three ratios; then how often each split rule holds less
stock than uniform, and the medians and worst ratios. A rule is adopted only if it holds
less stock on most (origin, half) units.
"""

from __future__ import annotations

import os

for _var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

import argparse  # noqa: E402
import itertools  # noqa: E402
import sys  # noqa: E402
import time  # noqa: E402
import warnings  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

import forecast_calibration as fcal  # noqa: E402

from inventory.ordering import backtest as bt  # noqa: E402
from inventory.ordering import policy  # noqa: E402
from inventory.ordering.simulate import policy_levels_batch  # noqa: E402

DEFAULT_CSV = ROOT.parent / "shared" / "data" / "carparts_dev.csv"
H = 6
ENDS = fcal.EARLY_ENDS
GRID = (0.3, 0.5, 0.6, 0.7, 0.8, 0.85, 0.88, 0.9, 0.92, 0.94, 0.95, 0.96, 0.97, 0.98,
        0.99, 0.995)
SWEEP = fcal.SWEEP
SWEEP_TOP = (*fcal.SWEEP, 0.995, 0.998)
DROP = (0.0, 0.05, 0.1, 0.2)
PART_SWEEP = (0.85, 0.9, 0.93, 0.95, 0.96, 0.97, 0.98, 0.985, 0.99, 0.995, 0.998, 0.999)
CLASSES = ("A", "B", "C")


def class_curves(train: np.ndarray, pos: np.ndarray, setup: bt.BacktestSetup
                 ) -> tuple[np.ndarray, np.ndarray, float]:
    """Inner window: stock (units per series per month, summed over the parts of the class
    and divided by all parts) and units served, per class (rows) and grid target (columns);
    and the units demanded in all."""
    inner, check = train[:, :-H], train[:, -H:]
    dist = bt._fit(inner, pos[:-H], setup).dist.dist
    cls = np.asarray(bt.abc_by_units(inner))
    n = train.shape[0]
    stock = np.zeros((len(CLASSES), len(GRID)))
    served = np.zeros_like(stock)
    demand = 0.0
    for j, t in enumerate(GRID):
        lv = policy.order_up_to_levels(dist, t, lead_time=fcal.LEAD, review_period=fcal.REVIEW)
        sim = bt.simulate_order_up_to(lv, check, lead_time=fcal.LEAD, review_period=fcal.REVIEW)
        demand = float(sim.demand.sum())
        for k, c in enumerate(CLASSES):
            rows = cls == c
            stock[k, j] = float(sim.on_hand[rows].sum()) / (n * H)
            served[k, j] = float(sim.served[rows].sum())
    return stock, served, demand


def split_targets(curves: tuple[np.ndarray, np.ndarray, float], f: float, tie_ab: bool
                  ) -> tuple[float, float, float]:
    """Class targets on the grid with the least inner stock whose inner pooled fill >= f
    (the highest-fill combination when none reaches it)."""
    stock, served, demand = curves
    g = range(len(GRID))
    best: tuple[float, tuple[int, int, int]] | None = None
    top: tuple[float, tuple[int, int, int]] | None = None
    combos = ((a, a, c) for a in g for c in g) if tie_ab else itertools.product(g, g, g)
    for a, b, c in combos:
        fill = (served[0, a] + served[1, b] + served[2, c]) / demand
        st = stock[0, a] + stock[1, b] + stock[2, c]
        if top is None or fill > top[0]:
            top = (fill, (a, b, c))
        if fill >= f and (best is None or st < best[0]):
            best = (st, (a, b, c))
    assert top is not None
    pick = best[1] if best is not None else top[1]
    return GRID[pick[0]], GRID[pick[1]], GRID[pick[2]]


def nearest_levels(dist, t: float, rows: np.ndarray) -> np.ndarray:
    """Per-part target t, each part's level rounded to the NEAREST whole level in expected
    cycle fill (one unit less when the level below misses t by less than the level found
    overshoots it) on ``rows``; rounded up (the library's rule) elsewhere."""
    up = policy.order_up_to_levels(dist, t, lead_time=fcal.LEAD, review_period=fcal.REVIEW)
    f_up = policy.cycle_fill_rate(dist, up, lead_time=fcal.LEAD, review_period=fcal.REVIEW)
    f_dn = policy.cycle_fill_rate(dist, np.maximum(up - 1, 0), lead_time=fcal.LEAD,
                                  review_period=fcal.REVIEW)
    down = rows & (up > 0) & (t - f_dn < f_up - t)
    return np.where(down, up - 1, up)


def one_unit(sub: np.ndarray, pos: np.ndarray, setup: bt.BacktestSetup) -> dict[str, float]:
    train, test = sub[:, :-H], sub[:, -H:]
    p = pos[:-H]
    dist = bt._fit(train, p, setup).dist.dist
    cls = np.asarray(bt.abc_by_units(train))
    out: dict[str, float] = {}
    uni = policy_levels_batch(dist, SWEEP_TOP, allocation="uniform", lead_time=fcal.LEAD,
                              review_period=fcal.REVIEW)
    res = [fcal.simulate(lv, test) for lv in uni]
    out["uniform"] = fcal.stock_of_sweep(res, 0.95)
    curves = class_curves(train, p, setup)
    for name, tie in (("split3", False), ("split2", True)):
        res = []
        for f in SWEEP:
            ta, tb, tc = split_targets(curves, f, tie)
            t = np.where(cls == "A", ta, np.where(cls == "B", tb, tc))
            lv = policy.order_up_to_levels(dist, t, lead_time=fcal.LEAD,
                                           review_period=fcal.REVIEW)
            res.append(fcal.simulate(lv, test))
        out[name] = fcal.stock_of_sweep(res, 0.95)
    for name, only_c in (("nearest", False), ("nearest C", True)):
        res = []
        for t in PART_SWEEP:
            lv = nearest_levels(dist, t, (cls == "C") if only_c else np.ones(len(dist), bool))
            res.append(fcal.simulate(lv, test))
        out[name] = fcal.stock_of_sweep(res, 0.95)
    cover_mean = dist.mean * (fcal.LEAD + fcal.REVIEW)
    for m0 in DROP:
        keep = np.flatnonzero(cover_mean >= m0)
        lvs = policy_levels_batch(dist.take(keep), SWEEP_TOP, allocation="uniform",
                                  lead_time=fcal.LEAD, review_period=fcal.REVIEW)
        res = []
        for lk in lvs:
            lv = np.zeros(len(dist), dtype=np.int64)
            lv[keep] = lk
            res.append(fcal.simulate(lv, test))
        out[f"drop{m0}"] = fcal.stock_of_sweep(res, 0.95)
    out["ses"] = fcal.hindsight_ses(sub, 0.95)[0]
    return out


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--csv", default=os.environ.get("INVENTORY_CARPARTS_CSV", str(DEFAULT_CSV)))
    ap.add_argument("--splits", type=int, default=5)
    ap.add_argument("--seed", type=int, default=7)
    args = ap.parse_args(argv)
    data = fcal.read_series(args.csv)
    if data is None:
        return 0
    warnings.filterwarnings("ignore")
    y, pos = data
    halves = fcal.random_halves(y.shape[0], args.splits, args.seed)
    setup = bt.BacktestSetup(horizon=H, allocation="uniform", calibrate=False)
    t0 = time.perf_counter()
    print(f"load average {os.getloadavg()[0]:.1f}")
    names = (["uniform", "split3", "split2", "nearest", "nearest C"]
             + [f"drop{m}" for m in DROP])
    print("| end | half | " + " | ".join(f"{k} / SES" for k in names) + " |")
    print("|---|---|" + "---|" * len(names))
    rows = []
    for e in ENDS:
        for h, idx in enumerate(halves):
            u = one_unit(y[idx, :e], pos[:e], setup)
            r = {k: v / u["ses"] for k, v in u.items() if k != "ses"}
            rows.append(r)
            print(f"| {e} | {h + 1} | " + " | ".join(f"{v:.3f}" for v in r.values()) + " |",
                  flush=True)
    print(f"\n{len(rows)} (origin, half) units, {time.perf_counter() - t0:.0f} s, load average "
          f"{os.getloadavg()[0]:.1f}")
    uni = np.asarray([r["uniform"] for r in rows])
    print(f"uniform: median {np.nanmedian(uni):.3f}, worst {np.nanmax(uni):.3f}")
    for k in names[1:]:
        a = np.asarray([r[k] for r in rows])
        ok = np.isfinite(a) & np.isfinite(uni)
        print(f"{k}: median {np.nanmedian(a):.3f}, worst {np.nanmax(a):.3f}; less stock than "
              f"uniform on {int(np.sum(a[ok] < uni[ok]))} of {int(ok.sum())} units "
              f"(median change {100 * np.median(a[ok] / uni[ok] - 1):+.1f} %)")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
