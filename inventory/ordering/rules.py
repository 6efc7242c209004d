"""Order-quantity rules of the planner: whole packs and minimums, the shelf-life cap, the
top-up to a supplier's minimum order value, and spending a budget by marginal analysis.

All pure functions over plain values; money is handled as exact integers of the smallest
price unit (see :func:`money_scale`) while deciding, and as ``Decimal`` in the plan.
"""

from __future__ import annotations

import heapq
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from datetime import date, timedelta
from decimal import Decimal

import numpy as np
from numpy.typing import ArrayLike, NDArray

from inventory.bench.seals import shelf_life_group, storage_limit
from inventory.core.cure import quarter_of

# -- packs, minimums and the shelf-life cap -------------------------------------------------


@dataclass(frozen=True, slots=True)
class Rounded:
    """An order quantity after rounding.

    ``rounded``: the need in whole packs and at least the minimum, before any cap;
    ``qty``: what is ordered; ``capped``: the shelf-life cap cut ``rounded``;
    ``min_forced``: the minimum (MOQ or one pack) is above the cap and was ordered anyway.
    """

    qty: int
    packs: int
    rounded: int
    minimum: int
    capped: bool = False
    min_forced: bool = False


def minimum_order(pack: int, moq: int) -> int:
    """The smallest quantity a supplier accepts: the MOQ rounded up to whole packs, and at
    least one pack."""
    pack = max(int(pack), 1)
    return max(-(-max(int(moq), 1) // pack), 1) * pack


def round_order(need: int, *, pack: int = 1, moq: int = 1, cap: int | None = None) -> Rounded:
    """Whole packs, at least the minimum, at most the shelf-life ``cap``.

    - ``need <= 0``: nothing.
    - Otherwise the need rounded up to whole packs and at least the minimum (never below the
      need), unless that exceeds ``cap``: then the largest whole number of packs within the
      cap that still meets the minimum; if even the minimum is above the cap, the minimum
      (``min_forced``: the line must say so).
    """
    pack = max(int(pack), 1)
    minimum = minimum_order(pack, moq)
    if need <= 0:
        return Rounded(0, 0, 0, minimum)
    rounded = max(-(-int(need) // pack) * pack, minimum)
    if cap is None or rounded <= cap:
        return Rounded(rounded, rounded // pack, rounded, minimum)
    within = (max(int(cap), 0) // pack) * pack
    if within >= minimum:
        return Rounded(within, within // pack, rounded, minimum, capped=True)
    return Rounded(minimum, minimum // pack, rounded, minimum, capped=True, min_forced=True)


def new_lot_limit(arrival: date, material: str | None, *, cure_age_days: float,
                  margin_days: float) -> tuple[date | None, str | None]:
    """The day a lot delivered on ``arrival`` should be used up by: its ISO 2230 storage
    limit (initial period counted from the end of its cure quarter, see
    :func:`inventory.bench.seals.storage_limit`) less ``margin_days``.

    The cure quarter of stock not yet delivered is unknown; it is taken as the quarter
    ``cure_age_days`` before arrival (how old the supplier's rubber usually is when it
    arrives). Returns ``(day, cure quarter)``, or ``(None, None)`` for parts outside ISO 2230
    (plastics, metals, oils, kits) or of an unknown material.
    """
    if not material:
        return None, None
    try:
        if shelf_life_group(material) is None:
            return None, None
    except ValueError:
        return None, None
    cured = quarter_of(arrival - timedelta(days=max(float(cure_age_days), 0.0)))
    limit = storage_limit(cured, material)
    if limit is None:
        return None, None
    return limit - timedelta(days=float(margin_days)), cured


# -- money as exact integers ------------------------------------------------------------------


def money_scale(prices: Sequence[Decimal]) -> int:
    """The power of ten that makes every price a whole number (at least 10**2)."""
    exps = {p.as_tuple().exponent for p in prices}
    places = max([2] + [-e for e in exps if isinstance(e, int)])
    return 10**places


def to_units(price: Decimal, scale: int) -> int:
    return int(price * scale)


# -- topping an order up to the supplier's minimum order value --------------------------------


@dataclass(frozen=True, slots=True)
class TopUpLine:
    """A line that may take more packs: its current quantity, pack, price (exact units), the
    most it may hold (shelf-life cap or a cover ceiling) and its minimum (the first step of
    a line that has nothing yet)."""

    qty: int
    pack: int
    price: int
    ceiling: int
    minimum: int = 1


def top_up(lines: Sequence[TopUpLine], shortfall: int,
           gain: Callable[[int, int, int], float]) -> list[int]:
    """Extra units per line that bring an order's value up by at least ``shortfall``.

    Greedy marginal analysis: one pack at a time to the line whose next pack fills the most
    expected units per currency unit (``gain(line, from_qty, to_qty)``; ties go to the
    cheaper pack), never above a line's ceiling; a line at zero starts with its minimum.
    Stops when the shortfall is met or no line may take more; returns the extra units per
    line (possibly not enough: the caller says so).
    """
    extra = [0] * len(lines)
    heap: list[tuple[float, int, int, int]] = []

    def push(i: int) -> None:
        ln = lines[i]
        q = ln.qty + extra[i]
        step = max(ln.minimum, ln.pack) if q == 0 else ln.pack
        if q + step > ln.ceiling or ln.price <= 0:
            return
        cost = ln.price * step
        heapq.heappush(heap, (-gain(i, q, q + step) / cost, cost, i, step))

    for i in range(len(lines)):
        push(i)
    left = shortfall
    while left > 0 and heap:
        _, cost, i, step = heapq.heappop(heap)
        extra[i] += step
        left -= cost
        push(i)
    return extra


# -- spending a budget --------------------------------------------------------------------------


def greedy_budget(
    line: ArrayLike, cost: Sequence[int], gain: ArrayLike, budget: int,
    *, blocked: ArrayLike | None = None,
) -> NDArray[np.int64]:
    """How many of each line's increments a budget buys, by greedy marginal analysis.

    ``line``, ``cost`` (exact units) and ``gain`` (expected units filled) describe increments,
    grouped by line and in the order they must be taken (a line's second pack only after its
    first). Increments are taken by expected units filled per currency unit, best first;
    a line's ratios are "ironed" (running minimum) so a later increment never outranks an
    earlier one. An increment that no longer fits ends its line; cheaper increments of other
    lines may still fit. Lines in ``blocked`` get nothing. The total never exceeds ``budget``.
    Returns the number of increments taken per line (``max(line) + 1`` entries).
    """
    ln = np.asarray(line, dtype=np.int64)
    g = np.asarray(gain, dtype=float)
    c = np.asarray([float(x) for x in cost])
    n_lines = int(ln.max(initial=-1)) + 1
    taken = np.zeros(n_lines, dtype=np.int64)
    if ln.size == 0:
        return taken
    ratio = np.where(c > 0, np.maximum(g, 0.0) / np.maximum(c, 1e-300), np.inf)
    # ironing: running minimum of the ratio within each line
    starts = np.r_[0, np.flatnonzero(np.diff(ln)) + 1]
    ironed = ratio.copy()
    for a, b in zip(starts, np.r_[starts[1:], ln.size], strict=True):
        ironed[a:b] = np.minimum.accumulate(ratio[a:b])
    seq = np.arange(ln.size) - np.repeat(starts, np.diff(np.r_[starts, ln.size]))
    order = np.lexsort((seq, ln, -ironed))
    closed = np.zeros(n_lines, dtype=bool)
    if blocked is not None:
        bl = np.asarray(blocked, dtype=np.int64)
        closed[bl[bl < n_lines]] = True  # a blocked line with no increments has nothing to close
    left = int(budget)
    for k in order:
        i = int(ln[k])
        if closed[i] or seq[k] != taken[i]:
            continue
        price = int(cost[k])
        if price > left:
            closed[i] = True
            continue
        left -= price
        taken[i] += 1
    # the greedy can be far off when a large first increment (a supplier's minimum) does
    # not fit: a knapsack over the lines' prefixes checks it and wins when it fills more
    exact = _prefix_knapsack(ln, [int(x) for x in cost], g, int(budget), closed_from=blocked)
    if exact is not None and _gain(ln, g, exact) > _gain(ln, g, taken) + 1e-12:
        return exact
    return taken


def _gain(ln: NDArray[np.int64], g: NDArray[np.float64], taken: NDArray[np.int64]) -> float:
    seq = np.arange(ln.size) - np.searchsorted(ln, ln)
    return float(g[seq < taken[ln]].sum())


MAX_DP_CELLS = 4_000_000  # (lines x budget steps) of the knapsack check: 16 MB of choices


def _prefix_knapsack(ln: NDArray[np.int64], cost: list[int], g: NDArray[np.float64],
                     budget: int, *, closed_from: ArrayLike | None, cells: int = 20_000
                     ) -> NDArray[np.int64] | None:
    """Best number of increments per line (each line a prefix of its increments) within
    the budget, by dynamic programming over the budget (multiple-choice knapsack, e.g.
    Kellerer, Pferschy and Pisinger 2004, ch. 11). Costs are counted in ``budget / cells``
    steps rounded UP when the budget is larger than ``cells`` units, so the answer never
    exceeds the budget (and may leave a little unspent). Lines must be sorted. None when
    the grid would be too coarse (over ``MAX_DP_CELLS / 200`` lines): the greedy stands.
    Recalled from memory: the greedy by ratio is near-optimal when every increment is small
    against the budget (many lines), and can be far off when few lines share it."""
    if ln.size == 0 or budget <= 0 or np.any(np.diff(ln) < 0):
        return None
    n_lines = int(ln.max()) + 1
    # memory and time stay bounded: at most MAX_DP_CELLS (line, budget step) cells; with
    # thousands of lines the grid gets too coarse to help and the check is skipped
    cells = min(cells, MAX_DP_CELLS // n_lines)
    if cells < 200:
        return None
    step = max(1, -(-budget // cells))
    cap = budget // step
    blocked = set() if closed_from is None else {int(x) for x in np.asarray(closed_from)}
    dp = np.full(cap + 1, 0.0)
    choice = np.zeros((n_lines, cap + 1), dtype=np.int32)
    starts = np.searchsorted(ln, np.arange(n_lines))
    ends = np.searchsorted(ln, np.arange(n_lines), side="right")
    for i in range(n_lines):
        if i in blocked or starts[i] == ends[i]:
            continue
        best = dp.copy()
        c_cum = 0
        g_cum = 0.0
        for m, k in enumerate(range(starts[i], ends[i]), start=1):
            c_cum += cost[k]
            g_cum += max(float(g[k]), 0.0)
            units = -(-c_cum // step)
            if units > cap:
                break
            cand = np.full(cap + 1, -np.inf)
            cand[units:] = dp[: cap + 1 - units] + g_cum
            better = cand > best + 1e-12
            best = np.where(better, cand, best)
            choice[i, better] = m
        dp = best
    out = np.zeros(n_lines, dtype=np.int64)
    b = cap
    for i in range(n_lines - 1, -1, -1):
        m = int(choice[i, b])
        out[i] = m
        if m:
            b -= -(-sum(cost[starts[i]: starts[i] + m]) // step)
    return out
