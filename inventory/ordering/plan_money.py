"""Planner steps 5 to 7: rounding to packs and minimums under the shelf-life cap, the top-up
to each supplier's minimum order value, the budget, and the expected fill before and after.
Each step reads one :class:`~inventory.ordering.plan_state.PlanState`; the quantities and
fills come back as one :class:`OrderQuantities`."""

from __future__ import annotations

import math
from collections import defaultdict
from dataclasses import dataclass
from datetime import date

import numpy as np

from inventory.ordering import policy
from inventory.ordering.calendar import positions
from inventory.ordering.levels import filled_units
from inventory.ordering.plan_state import FloatArray, IntArray, PlanningError, PlanState
from inventory.ordering.rules import (
    Rounded,
    TopUpLine,
    greedy_budget,
    money_scale,
    new_lot_limit,
    round_order,
    to_units,
    top_up,
)


@dataclass
class OrderQuantities:
    """Per chosen line (in part order): rounding, shelf-life cap and limit, the quantity
    ordered, the top-up, the budget cut, the expected fill and the fill before the caps;
    the suppliers the budget dropped; the pooled service figures."""

    rounding: list[Rounded]
    caps: list[int | None]
    limits: list[tuple[date | None, str | None]]
    qty: IntArray
    topped: IntArray
    cut: IntArray
    fill: FloatArray
    fill_caps: FloatArray
    blocked: list[str]
    service_target: float
    expected: float
    expected_before: float


def order_quantities(st: PlanState) -> OrderQuantities:
    """Steps 5 to 7 for the chosen lines; sets ``st.ch``, ``st.parts``, ``st.scale`` and
    ``st.price``."""
    req, opt, c, t, lv = st.req, st.opt, st.c, st.t, st.lv
    ch = np.asarray(st.chosen, dtype=np.int64)
    ch = ch[np.argsort(c.part[ch], kind="stable")]
    st.ch, st.parts = ch, c.part[ch]
    parts = st.parts
    st.scale = money_scale([c.landed[k] for k in ch] + [c.opt[k].unit_cost for k in ch]
                           + [s.min_order_value for s in req.suppliers.values()]
                           + ([opt.budget] if opt.budget is not None else []))
    st.price = [to_units(c.opt[k].unit_cost, st.scale) for k in ch]
    assert st.cal_use is not None

    # rounding and the shelf-life cap
    rounding: list[Rounded] = []
    caps: list[int | None] = []
    limits = _shelf_limits(st)
    has_limit = np.array([lim is not None for lim, _ in limits], dtype=bool)
    use = np.zeros(len(ch))
    if has_limit.any():
        sel = np.flatnonzero(has_limit)
        days = np.array([limits[j][0] for j in sel], dtype="datetime64[D]")
        use[sel] = st.cal_use.between(parts[sel], st.a0, positions(days, st.cal.month0))
        before = days <= t.arrival[ch[sel]]
        use[sel[before]] = 0.0
    for_kits, assembled = st.kit_units["for_kits"], st.kit_units["assembled"]
    to_kits = st.kit_units["to_kits"]
    position = st.position
    # spare units going into kits leave the shelf now: they do not count against the cap
    cap_arr = np.maximum(np.floor(use + 1e-9).astype(np.int64) + to_kits[parts]
                         - position[parts], 0)
    need_arr = np.maximum(lv.raw[ch] - assembled[parts] + for_kits[parts], 0).tolist()
    pack_l, moq_l = c.pack[ch].tolist(), c.moq[ch].tolist()
    for j in range(len(ch)):
        cap = int(cap_arr[j]) if has_limit[j] else None
        caps.append(cap)
        rounding.append(round_order(need_arr[j], pack=pack_l[j], moq=moq_l[j], cap=cap))
    qty = np.array([r.qty for r in rounding], dtype=np.int64)
    before_caps = np.array([r.rounded for r in rounding], dtype=np.int64)

    # top up to each supplier's minimum order value
    topped = _top_up_minimums(st, qty, caps)
    qty = qty + topped
    before_budget = qty.copy()

    # the budget
    blocked_suppliers: list[str] = []
    if opt.budget is not None:
        qty, blocked_suppliers = _spend_budget(st, qty)
    budget_cut = before_budget - qty

    # expected fill
    lvl = position[parts] + assembled[parts] - to_kits[parts]
    d_ch = lv.dist.take(ch)
    lt, rp = lv.lead_op[ch], lv.review_op[ch]
    fill = policy.cycle_fill_rate(d_ch, lvl + qty, lead_time=lt, review_period=rp)

    def fill_at(extra: IntArray) -> FloatArray:
        """The fill with ``extra`` units ordered instead, computed only where it differs."""
        out = fill.copy()
        diff = np.flatnonzero(extra != qty)
        if diff.size:
            out[diff] = policy.cycle_fill_rate(d_ch.take(diff), lvl[diff] + extra[diff],
                                               lead_time=lt[diff], review_period=rp[diff])
        return out

    fill_caps = fill_at(np.maximum(before_caps, before_budget))
    fill_budget = fill_at(before_budget)
    weight = d_ch.mean * rp
    wsum = float(weight.sum())
    tgt_ch = st.targets[parts]
    service_target = float((weight * tgt_ch).sum() / wsum) if wsum > 0 else float(
        tgt_ch.mean() if tgt_ch.size else 0.0)
    expected = float((weight * fill).sum() / wsum) if wsum > 0 else 1.0
    expected_before = float((weight * fill_budget).sum() / wsum) if wsum > 0 else 1.0
    return OrderQuantities(rounding, caps, limits, qty, topped, budget_cut, fill, fill_caps,
                           blocked_suppliers, service_target, expected, expected_before)


def _shelf_limits(st: PlanState) -> list[tuple[date | None, str | None]]:
    """Use-by day and assumed cure quarter of the new lot of each chosen line (cached per
    arrival day, material and cure age: many lines share them)."""
    req, opt, c, ch, parts, codes, t = st.req, st.opt, st.c, st.ch, st.parts, st.codes, st.t
    cache: dict[tuple, tuple[date | None, str | None]] = {}
    out = []
    arrivals = t.arrival[ch].tolist()
    for j, k in enumerate(ch.tolist()):
        stock = req.stock.get(codes[int(parts[j])])
        age = c.opt[k].cure_age_days
        key = (arrivals[j], stock.material if stock else None,
               opt.cure_age_days if age is None else age)
        if key not in cache:
            cache[key] = new_lot_limit(key[0], key[1], cure_age_days=key[2],
                                       margin_days=opt.shelf_margin_days)
        out.append(cache[key])
    return out


def _top_up_minimums(st: PlanState, qty: IntArray, caps: list[int | None]) -> IntArray:
    """Units added per line to reach each supplier's minimum order value, where they fill
    the most expected units (:func:`inventory.ordering.rules.top_up`)."""
    req, opt, cal, c, lv, ch, parts = st.req, st.opt, st.cal, st.c, st.lv, st.ch, st.parts
    price, position, scale, a0 = st.price, st.position, st.scale, st.a0
    for_kits = st.kit_units["for_kits"]
    extra = np.zeros(len(ch), dtype=np.int64)
    by_sup: dict[str, list[int]] = defaultdict(list)
    for j, k in enumerate(ch):
        by_sup[c.opt[k].supplier].append(j)
    for sup, js in by_sup.items():
        minimum = to_units(req.suppliers[sup].min_order_value, scale)
        total = sum(int(qty[j]) * price[j] for j in js)
        if total <= 0 or total >= minimum:
            continue
        cands = [j for j in js if lv.dist.mean[ch[j]] > 0]
        lines = []
        for j in cands:
            k, p = ch[j], int(parts[j])
            cover = float(cal.between([p], a0, a0 + opt.topup_months)[0]) + int(for_kits[p])
            ceiling = max(int(math.floor(cover)), int(lv.level_int[k])) - int(position[p])
            cap = caps[j]
            if cap is not None:
                ceiling = min(ceiling, cap)
            lines.append(TopUpLine(int(qty[j]), int(c.pack[k]), price[j],
                                   max(ceiling, int(qty[j])), int(c.minimum[k])))

        def gain(i: int, a: int, b: int, cands: list[int] = cands) -> float:
            k = np.array([ch[cands[i]]])
            p = int(parts[cands[i]])
            d = lv.dist.take(k)
            lo = filled_units(d, position[p] + a, lead_time=lv.lead_op[k],
                              review_period=lv.review_op[k])
            hi = filled_units(d, position[p] + b, lead_time=lv.lead_op[k],
                              review_period=lv.review_op[k])
            # tie-break: the faster mover, so a top-up buys what sells soonest
            return float(hi[0] - lo[0]) + 1e-9 * float(d.mean[0]) * (b - a)

        add = top_up(lines, minimum - total, gain)
        for i, j in enumerate(cands):
            extra[j] += add[i]
    return extra


def _spend_budget(st: PlanState, qty: IntArray) -> tuple[IntArray, list[str]]:
    """Step 6: the budget spent where each currency unit fills the most expected units; a
    supplier whose order would fall below its minimum is dropped (returned)."""
    req, opt, c, lv, ch, parts = st.req, st.opt, st.c, st.lv, st.ch, st.parts
    price, position, scale = st.price, st.position, st.scale
    assert opt.budget is not None
    budget = to_units(opt.budget, scale)
    sup_of = [c.opt[k].supplier for k in ch]
    active = [s for s in dict.fromkeys(sup_of[j] for j in range(len(ch)) if qty[j] > 0)]
    mins = {s: to_units(req.suppliers[s].min_order_value, scale) for s in active}
    if active and min(mins.values()) > budget:
        s = min(active, key=lambda x: mins[x])
        raise PlanningError(
            f"budget {opt.budget:.2f} is below the smallest supplier minimum order "
            f"({req.suppliers[s].min_order_value:.2f} at {s}): nothing could be ordered")
    inc_line, inc_cost, levels = [], [], []
    qty_l, min_l, pack_l = qty.tolist(), c.minimum[ch].tolist(), c.pack[ch].tolist()
    for j in range(len(ch)):
        q = qty_l[j]
        if q <= 0:
            continue
        first = min(q, min_l[j])
        n_packs = (q - first) // pack_l[j]
        # at most ``budget_steps`` increments per line: packs are grouped when there are more
        chunk = max(-(-n_packs // opt.budget_steps), 1) * pack_l[j]
        cum = first
        inc_line.append(j)
        inc_cost.append(price[j] * first)
        levels.append(cum)
        while cum < q:
            step = min(chunk, q - cum)
            cum += step
            inc_line.append(j)
            inc_cost.append(price[j] * step)
            levels.append(cum)
    if not inc_line:
        return qty, []
    il = np.array(inc_line, dtype=np.int64)
    lev = np.array(levels, dtype=np.int64)
    # expected units filled at every level, and at no order: the gain of each increment is
    # the difference to the level before it
    starts = np.r_[True, il[1:] != il[:-1]]
    first_rows = il[starts]
    all_line = np.concatenate([first_rows, il])
    all_lev = np.concatenate([np.zeros(first_rows.size, dtype=np.int64), lev])
    rows = ch[all_line]
    filled = filled_units(lv.dist.take(rows), position[parts[all_line]] + all_lev,
                          lead_time=lv.lead_op[rows], review_period=lv.review_op[rows])
    hi = filled[first_rows.size:]
    lo = np.r_[0.0, hi[:-1]]
    lo[starts] = filled[:first_rows.size]
    gain = hi - lo
    blocked: list[str] = []
    while True:
        bl = [j for j in range(len(ch)) if sup_of[j] in blocked]
        taken = greedy_budget(il, inc_cost, gain, budget, blocked=bl or None)
        new = np.zeros(len(ch), dtype=np.int64)
        for n_taken_line in np.flatnonzero(taken):
            sel = np.flatnonzero(il == n_taken_line)[: taken[n_taken_line]]
            new[n_taken_line] = lev[sel[-1]]
        totals: dict[str, int] = defaultdict(int)
        for j in range(len(ch)):
            totals[sup_of[j]] += int(new[j]) * price[j]
        below = [s for s, v in totals.items() if 0 < v < mins.get(s, 0)]
        if not below:
            return new, blocked
        blocked.append(min(below, key=lambda s: totals[s]))
