"""Cross-validation of the forecast's modelling choices for stock (issue 14 item 0): the
class boundaries, the method per class (candidates, combinations, per-series or per-class
constants, selection) and the season, each judged by the stock it needs at equal fill.

    python benchmarks/forecast_choice_cv.py [--csv FILE] [--splits 5] [--variants NAME ...]

Data: ../shared/data/carparts_dev.csv (override with --csv or INVENTORY_CARPARTS_CSV);
skipped with a message when absent. Outer origins whose 6 scored months end before month 43
(data cut at 35, 37, 39, 41, 43 months, as ``calibration_cv.py``), so none of the months
``forecast_calibration.py`` scores is used; on each, ``--splits`` random splits of the
series into halves (seeded). For each half and each variant of
:class:`inventory.forecast.fit_records.FitOptions`: forecast and distribution fitted on the
training months (the variance law's variants in ``LAWS``), the pooled uniform policy swept over asked fill rates, its stock at 95.0 %
ACHIEVED fill interpolated (as ``forecast_calibration.py``). Printed: per variant, on how
many (origin, half) units it holds less stock than the defaults, the median change and the
median and worst ratio to SES with z tuned in hindsight on the same half. A variant is
adopted only if it holds less stock on most units.
"""

from __future__ import annotations

import os

for _var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

import argparse  # noqa: E402
import sys  # noqa: E402
import time  # noqa: E402
import warnings  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

import forecast_calibration as fcal  # noqa: E402

from inventory.forecast import methods as fc  # noqa: E402
from inventory.forecast.fit_records import FitOptions  # noqa: E402
from inventory.forecast.uncertainty import LawOptions  # noqa: E402
from inventory.ordering import backtest as bt  # noqa: E402
from inventory.ordering.simulate import policy_levels_batch  # noqa: E402

DEFAULT_CSV = ROOT.parent / "shared" / "data" / "carparts_dev.csv"
H = 6
ENDS = (35, 37, 39, 41, 43)
SWEEP = (*fcal.SWEEP, 0.995, 0.998)
BASE = FitOptions(horizon=H)
VARIANTS: dict[str, FitOptions] = {
    "defaults": BASE,
    "constants per series and per class (former default)":
        FitOptions(horizon=H, param_modes=("series", "class")),
    "constants per series only": FitOptions(horizon=H, param_modes=("series",)),
    "adi 1.2": FitOptions(horizon=H, adi_cutoff=1.2),
    "adi 1.5": FitOptions(horizon=H, adi_cutoff=1.5),
    "adi 2.0": FitOptions(horizon=H, adi_cutoff=2.0),
    "cv2 0.3": FitOptions(horizon=H, cv2_cutoff=0.3),
    "cv2 0.7": FitOptions(horizon=H, cv2_cutoff=0.7),
    "combine 1": FitOptions(horizon=H, combine=1),
    "combine 2": FitOptions(horizon=H, combine=2),
    "single margin 0": FitOptions(horizon=H, single_margin=0.0),
    "select per series": FitOptions(horizon=H, select="series"),
    "season off": FitOptions(horizon=H, seasonal="off"),
    "selection origins 3": FitOptions(horizon=H, origins=3),
    "selection origins 9": FitOptions(horizon=H, origins=9),
    "no ses": FitOptions(horizon=H, methods=("croston", "sba", "tsb", "adida", "imapa")),
    "no tsb": FitOptions(horizon=H, methods=("ses", "croston", "sba", "adida", "imapa")),
    "no aggregation": FitOptions(horizon=H, methods=("ses", "croston", "sba", "tsb")),
}


LAWS: dict[str, LawOptions] = {
    "law: exponent at most 1.1": LawOptions(b_max=1.1),
    "law: exponent at most 1.25": LawOptions(b_max=1.25),
    "law: exponent uncapped": LawOptions(b_max=3.0),
    "law: per SBC class": LawOptions(by="class"),
}


def stock_95(sub: np.ndarray, pos: np.ndarray, name: str) -> float:
    train, test = sub[:, :-H], sub[:, -H:]
    opt = VARIANTS.get(name, BASE)
    res = fc.fit_forecast(train, season_pos=pos[:-H], options=opt)
    dist = fc.fit_distribution(train, res, cover=fcal.LEAD + fcal.REVIEW, hold=H,
                               law=LAWS.get(name, LawOptions())).dist
    lvs = policy_levels_batch(dist, SWEEP, allocation="uniform", lead_time=fcal.LEAD,
                              review_period=fcal.REVIEW)
    res = [fcal.simulate(lv, test) for lv in lvs]
    return fcal.stock_at_fill([r[0] for r in res], [r[1] for r in res], 0.95)


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--csv", default=os.environ.get("INVENTORY_CARPARTS_CSV", str(DEFAULT_CSV)))
    ap.add_argument("--splits", type=int, default=5)
    ap.add_argument("--seed", type=int, default=7)
    ap.add_argument("--variants", nargs="+", default=[*VARIANTS, *LAWS])
    args = ap.parse_args(argv)
    path = Path(args.csv)
    if not path.exists():
        print(f"skipped: {path} not found (set --csv or INVENTORY_CARPARTS_CSV)")
        return 0
    warnings.filterwarnings("ignore")
    table = bt.read_wide_csv(path)
    y, pos = table.values, table.season_pos()
    assert pos is not None
    n = y.shape[0]
    rng = np.random.default_rng(args.seed)
    halves = []
    for _ in range(args.splits):
        perm = rng.permutation(n)
        halves += [np.sort(perm[: n // 2]), np.sort(perm[n // 2:])]
    names = ["defaults"] + [v for v in args.variants if v != "defaults"]
    t0 = time.perf_counter()
    print(f"load average {os.getloadavg()[0]:.1f}; {len(ENDS)} origins x {len(halves)} halves")
    units: list[dict[str, float]] = []
    for e in ENDS:
        for idx in halves:
            sub = y[idx, :e]
            mu = fcal.ses_mean(sub[:, :-H])
            z = fcal.smallest_z(mu, sub[:, -H:], 0.95)
            ses = fcal.simulate(fcal.sqrt_levels(mu, z), sub[:, -H:])[1]
            units.append({k: stock_95(sub, pos[:e], k) / ses for k in names})
        print(f"  end {e} done, {time.perf_counter() - t0:.0f} s", flush=True)
    print(f"\nload average {os.getloadavg()[0]:.1f}, {time.perf_counter() - t0:.0f} s\n")
    print("| variant | less stock than defaults | median change | median ratio to SES "
          "(hindsight) | worst |")
    print("|---|---|---|---|---|")
    base = np.asarray([u["defaults"] for u in units])
    for k in names:
        a = np.asarray([u[k] for u in units])
        ok = np.isfinite(a) & np.isfinite(base)
        print(f"| {k} | {int(np.sum(a[ok] < base[ok] - 1e-12))} of {int(ok.sum())} | "
              f"{100 * np.median(a[ok] / base[ok] - 1):+.1f} % | {np.nanmedian(a):.3f} | "
              f"{np.nanmax(a):.3f} |")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
