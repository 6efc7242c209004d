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
from inventory.ordering.simulate import policy_levels_batch  # noqa: E402

DEFAULT_CSV = ROOT.parent / "shared" / "data" / "carparts_dev.csv"
H = 6
ENDS = fcal.EARLY_ENDS
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
    return fcal.stock_of_sweep(res, 0.95)


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--csv", default=os.environ.get("INVENTORY_CARPARTS_CSV", str(DEFAULT_CSV)))
    ap.add_argument("--splits", type=int, default=5)
    ap.add_argument("--seed", type=int, default=7)
    ap.add_argument("--variants", nargs="+", default=[*VARIANTS, *LAWS])
    args = ap.parse_args(argv)
    data = fcal.read_series(args.csv)
    if data is None:
        return 0
    warnings.filterwarnings("ignore")
    y, pos = data
    halves = fcal.random_halves(y.shape[0], args.splits, args.seed)
    names = ["defaults"] + [v for v in args.variants if v != "defaults"]
    t0 = time.perf_counter()
    print(f"load average {os.getloadavg()[0]:.1f}; {len(ENDS)} origins x {len(halves)} halves")
    units: list[dict[str, float]] = []
    for e in ENDS:
        for idx in halves:
            sub = y[idx, :e]
            ses = fcal.hindsight_ses(sub, 0.95)[0]
            units.append({k: stock_95(sub, pos[:e], k) / ses for k in names})
        print(f"  end {e} done, {time.perf_counter() - t0:.0f} s", flush=True)
    print(f"\nload average {os.getloadavg()[0]:.1f}, {time.perf_counter() - t0:.0f} s\n")
    fcal.print_against(units, names, "defaults")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
