"""The series a forecast fits, built from the history: parts (kits exploded through their
bills of materials), kits, fork families or stock items; each starts at its first receipt
or use."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from inventory.core.errors import InventoryError
from inventory.forecast import demand as dm
from inventory.forecast.data import DemandHistory
from inventory.forecast.options import By

FloatArray = NDArray[np.float64]


def first_observed(v: FloatArray) -> NDArray[np.int64]:
    """Index of each row's first non-NaN period (the row length when none)."""
    present = ~np.isnan(v)
    return np.where(present.any(axis=1), present.argmax(axis=1), v.shape[1]).astype(np.int64)


@dataclass(frozen=True)
class Series:
    """The series of one forecast, with what the installed base needs to reach them."""

    codes: list[str]
    kinds: list[str]
    y: FloatArray  # (n, T), NaN before start
    # installed base: series demand per job of each group = usage (G, items) @ to_series,
    # or for families the indicator ``family_of`` (G, n)
    to_series: FloatArray | None
    family_of: FloatArray | None
    unit_cost: list[float | None]


def scale_of(kind: str) -> str:
    """Which measuring scale a series is on: oils and greases are counted in ml."""
    return "ml" if kind in ("oil", "grease") else "each"


def build_series(hist: DemandHistory, by: By) -> Series:
    """The ``by`` series of ``hist`` (see the module docstring of
    :mod:`inventory.forecast.service`, step 2)."""
    items, kinds = hist.items, hist.kinds
    n_items = len(items)
    if by == "family":
        fams = sorted({f for f, _ in hist.groups} | set(hist.visits.family.tolist()))
        fi = {f: i for i, f in enumerate(fams)}
        per = dm.bucket_demand(hist.visits.day, np.array([fi[f] for f in hist.visits.family],
                                                         dtype=np.int64),
                               np.ones(len(hist.visits)), n_series=len(fams), freq=hist.freq,
                               start=hist.periods[0] if hist.periods.size else None,
                               end=(hist.periods[-1] + period_len(hist.freq) - 1)
                               if hist.periods.size else None)
        y = per.values[:, :hist.periods.size]
        vals = np.where(y > 0, 1.0, 0.0)
        start = np.where(vals.any(axis=1), vals.argmax(axis=1), y.shape[1])
        ind = np.zeros((len(hist.groups), len(fams)))
        for g, (f, _) in enumerate(hist.groups):
            if f in fi:
                ind[g, fi[f]] = 1.0
        return Series(fams, ["family"] * len(fams), dm.mask_before_start(y, start), None, ind,
                       [None] * len(fams))
    kit_cols = [i for i, k in enumerate(kinds) if k == "kit"]
    part_cols = [i for i, k in enumerate(kinds) if k != "kit"]
    if by == "item":
        cols = list(range(n_items))
        m = np.eye(n_items)
    elif by == "kit":
        cols = kit_cols
        m = np.eye(n_items)[:, kit_cols]
    elif by == "part":
        cols = part_cols
        m = np.eye(n_items)[:, part_cols]
        kit_specs = {k.code: k for k in hist.kits}
        parts = [items[i] for i in part_cols]
        specs = [kit_specs[items[i]] for i in kit_cols if items[i] in kit_specs]
        rows = [i for i in kit_cols if items[i] in kit_specs]
        if specs:
            bom = dm.bom_matrix(specs, parts)
            m[rows, :] += bom
    else:
        raise InventoryError(f"unknown --by {by!r}", hint="use part, kit, family or item")
    v = hist.values
    start_items = first_observed(v)
    y = (np.nan_to_num(v).T @ m).T
    contrib = m != 0
    start = np.array([start_items[contrib[:, j]].min() if contrib[:, j].any() else y.shape[1]
                      for j in range(m.shape[1])], dtype=np.int64)
    codes = [items[i] for i in cols]
    return Series(codes, [kinds[i] for i in cols], dm.mask_before_start(y, start), m, None,
                   [hist.unit_cost.get(c) for c in codes])


def period_len(freq: str) -> np.timedelta64:
    """A length that reaches past the last day of a period (week or month)."""
    return np.timedelta64(7, "D") if freq == "W" else np.timedelta64(31, "D")
