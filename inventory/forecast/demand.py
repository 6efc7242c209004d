"""Demand series from dated quantities, kit explosion and demand classification.

Plain numpy in, plain numpy out; the database edge (job lines, direct issues) turns its
rows into the arrays these functions take.

- Calendar bucketing (:func:`bucket_demand`): dated quantities per series into a
  ``(series, periods)`` matrix of monthly or ISO-week (Monday-start) buckets; gaps are zeros.
  A series can start late (:func:`mask_before_start`): periods before its first receipt
  or use are ``NaN``, which the forecasting methods treat as "not yet started".
- Kit explosion (:func:`explode_kits`): part demand = direct part demand + BOM^T x kit demand.
- Classification (:func:`classify`) by ADI and CV^2 with the Syntetos-Boylan-Croston
  cut-offs (1.32 and 0.49; Syntetos, Boylan and Croston 2005, JORS 56(5); REFERENCE.md 7.4).
  ADI is the mean interval between demands, the first interval counted from the start of
  the series up to and including the first demand (intervals 2, 3, 4, 2 give ADI 2.75, as in
  REFERENCE.md 7.6); CV^2 is the squared coefficient of variation of the non-zero sizes,
  with the SAMPLE standard deviation (``ddof=1``) by default, population with ``ddof=0``.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Literal

import numpy as np
from numpy.typing import ArrayLike, NDArray

from inventory.core.model import KitSpec

Freq = Literal["M", "W"]

SMOOTH = "smooth"
ERRATIC = "erratic"
INTERMITTENT = "intermittent"
LUMPY = "lumpy"
NO_DEMAND = "no demand"
CLASSES = (SMOOTH, ERRATIC, INTERMITTENT, LUMPY, NO_DEMAND)

# -- calendar -----------------------------------------------------------------------------


def period_index(dates: ArrayLike, freq: Freq = "M") -> NDArray[np.int64]:
    """Integer period number of each date: months since 1970-01, or ISO weeks (Monday start)
    since the week of 1970-01-01 (a Thursday, so Monday 1969-12-29 starts week 0)."""
    d = np.asarray(dates, dtype="datetime64[D]")
    if freq == "M":
        return d.astype("datetime64[M]").astype(np.int64)
    if freq == "W":
        return (d.astype(np.int64) + 3) // 7
    raise ValueError(f"unknown frequency {freq!r}; use 'M' or 'W'")


def period_start(index: ArrayLike, freq: Freq = "M") -> NDArray[np.datetime64]:
    """First day of each period number from :func:`period_index`."""
    i = np.asarray(index, dtype=np.int64)
    if freq == "M":
        return i.astype("datetime64[M]").astype("datetime64[D]")
    if freq == "W":
        return (i * 7 - 3).astype("datetime64[D]")
    raise ValueError(f"unknown frequency {freq!r}; use 'M' or 'W'")


@dataclass(frozen=True)
class DemandMatrix:
    """Demand per series and period: ``values[i, t]``; ``periods`` are the first days."""

    values: NDArray[np.float64]
    periods: NDArray[np.datetime64]
    freq: Freq = "M"


def bucket_demand(
    dates: ArrayLike,
    series: ArrayLike,
    qty: ArrayLike,
    *,
    n_series: int,
    freq: Freq = "M",
    start: np.datetime64 | str | None = None,
    end: np.datetime64 | str | None = None,
) -> DemandMatrix:
    """Sum dated quantities into calendar buckets, one row per series (gaps are zeros).

    ``series`` holds the row number (0..n_series-1) of each quantity. ``start`` and ``end``
    (dates, inclusive) widen or cut the period range; by default it spans the data.
    Quantities outside the range are dropped.
    """
    p = period_index(dates, freq)
    s = np.asarray(series, dtype=np.int64)
    q = np.asarray(qty, dtype=float)
    if not (p.shape == s.shape == q.shape):
        raise ValueError("dates, series and qty must have the same length")
    if s.size and (s.min() < 0 or s.max() >= n_series):
        raise ValueError("series numbers must lie in 0..n_series-1")
    if start is not None:
        lo = int(period_index(np.array([start], dtype="datetime64[D]"), freq)[0])
    else:
        lo = int(p.min()) if p.size else 0
    if end is not None:
        hi = int(period_index(np.array([end], dtype="datetime64[D]"), freq)[0])
    else:
        hi = int(p.max()) if p.size else lo - 1
    n_periods = max(hi - lo + 1, 0)
    keep = (p >= lo) & (p <= hi)
    flat = s[keep] * n_periods + (p[keep] - lo)
    values = np.bincount(flat, weights=q[keep], minlength=n_series * n_periods)
    return DemandMatrix(
        values.reshape(n_series, n_periods).astype(float),
        period_start(np.arange(lo, hi + 1), freq),
        freq,
    )


def mask_before_start(values: ArrayLike, start: ArrayLike) -> NDArray[np.float64]:
    """Copy of ``values`` with the periods before each series' start index set to NaN.

    ``start[i]`` is the period index of the part's first receipt or use (``>= n_periods``
    means the series has not started).
    """
    v = np.array(values, dtype=float)
    st = np.asarray(start, dtype=np.int64)
    t = np.arange(v.shape[1])
    v[t[None, :] < st[:, None]] = np.nan
    return v


# -- kits ---------------------------------------------------------------------------------


def bom_matrix(kits: Sequence[KitSpec], parts: Sequence[str]) -> NDArray[np.float64]:
    """Bill-of-materials matrix ``B[k, j]`` = quantity of part ``parts[j]`` in ``kits[k]``.

    Unknown part codes in a kit raise ``KeyError`` naming the kit and the part.
    """
    col = {code: j for j, code in enumerate(parts)}
    b = np.zeros((len(kits), len(parts)))
    for k, kit in enumerate(kits):
        for code, qty in kit.lines:
            if code not in col:
                raise KeyError(f"kit {kit.code}: part {code} is not in the part list")
            b[k, col[code]] += qty
    return b


def explode_kits(
    kit_demand: ArrayLike,
    bom: ArrayLike,
    part_demand: ArrayLike | None = None,
) -> NDArray[np.float64]:
    """Part demand from kit demand through the BOM: ``part_demand + bom.T @ kit_demand``.

    ``kit_demand`` is ``(kits, periods)``, ``bom`` is ``(kits, parts)``; the result is
    ``(parts, periods)``. NaN (not yet started) kit periods count as zero.
    """
    kd = np.nan_to_num(np.asarray(kit_demand, dtype=float))
    b = np.asarray(bom, dtype=float)
    if kd.ndim != 2 or b.ndim != 2 or b.shape[0] != kd.shape[0]:
        raise ValueError("kit_demand must be (kits, periods) and bom (kits, parts)")
    out = b.T @ kd
    if part_demand is not None:
        out = out + np.nan_to_num(np.asarray(part_demand, dtype=float))
    return out


# -- classification -----------------------------------------------------------------------


@dataclass(frozen=True)
class Classification:
    """Per-series ADI, CV^2, number of demands and SBC label (arrays of shape ``(n,)``)."""

    adi: NDArray[np.float64]
    cv2: NDArray[np.float64]
    n_demands: NDArray[np.int64]
    label: NDArray[np.str_]
    ddof: int

    def codes(self) -> NDArray[np.int64]:
        """Integer code of each label: index into :data:`CLASSES`."""
        out = np.zeros(self.label.shape, dtype=np.int64)
        for i, c in enumerate(CLASSES):
            out[self.label == c] = i
        return out


def interval_stats(values: ArrayLike) -> tuple[NDArray[np.float64], NDArray[np.int64]]:
    """(ADI, number of non-zero periods) per row, leading NaN meaning "not yet started".

    The first interval runs from the start of the series up to and including the first
    demand; the ADI is then (index of last demand - start + 1) / number of demands.
    Rows with no demand get ADI = inf.
    """
    v = np.asarray(values, dtype=float)
    n, t = v.shape
    observed = ~np.isnan(v)
    start = np.where(observed.any(axis=1), observed.argmax(axis=1), t)
    nz = np.nan_to_num(v) > 0
    count = nz.sum(axis=1)
    last = np.where(count > 0, t - 1 - nz[:, ::-1].argmax(axis=1), -1)
    with np.errstate(divide="ignore", invalid="ignore"):
        adi = np.where(count > 0, (last - start + 1) / np.maximum(count, 1), np.inf)
    return adi, count


def classify(
    values: ArrayLike,
    *,
    adi_cutoff: float = 1.32,
    cv2_cutoff: float = 0.49,
    ddof: int = 1,
) -> Classification:
    """Syntetos-Boylan-Croston class of each row of a ``(series, periods)`` matrix.

    ADI < ``adi_cutoff`` and CV^2 < ``cv2_cutoff``: smooth; ADI < cut-off, CV^2 >= cut-off:
    erratic; ADI >= cut-off, CV^2 < cut-off: intermittent; both above: lumpy; no demand at all:
    "no demand". CV^2 uses the standard deviation with ``ddof`` (1 = sample, the default;
    0 = population). With fewer than ``ddof + 1`` demands CV^2 is NaN and counts as below the
    cut-off.
    """
    v = np.asarray(values, dtype=float)
    adi, count = interval_stats(v)
    sizes = np.where(np.nan_to_num(v) > 0, np.nan_to_num(v), np.nan)
    with np.errstate(divide="ignore", invalid="ignore"):
        mean = np.nansum(sizes, axis=1) / np.maximum(count, 1)
        ss = np.nansum((sizes - mean[:, None]) ** 2, axis=1)
        var = np.where(count > ddof, ss / np.maximum(count - ddof, 1), np.nan)
        cv2 = np.where(count > ddof, var / mean**2, np.nan)
    high_adi = adi >= adi_cutoff
    high_cv = np.nan_to_num(cv2, nan=0.0) >= cv2_cutoff
    label = np.where(
        high_adi,
        np.where(high_cv, LUMPY, INTERMITTENT),
        np.where(high_cv, ERRATIC, SMOOTH),
    )
    label = np.where(count == 0, NO_DEMAND, label)
    return Classification(adi, cv2, count.astype(np.int64), label, ddof)
