"""The order planner: from a forecast, stock and price lists to purchase orders per supplier,
every line with its reason. Pure: plain records in (:mod:`inventory.ordering.model`),
a :class:`~inventory.ordering.model.Plan` out; no database, no files.

Steps, for every part and each supplier item that sells it (a "candidate"):

1. **Timing.** The order is placed now (regular plan: every supplier is reviewed today) or,
   before the season (``season_start``), by the supplier's order-by date = need date minus
   lead time, the need date being the season start or the day the stock is expected to run
   out, whichever comes first. It covers demand from now until the next possible delivery:
   regular plan, now + lead time + review period (the supplier's order cycle); before the
   season, the delivery of the order placed one review after the season's order, which
   takes the season's longer lead time (backorders): season start + review period + the
   extra season lead time. The demand in that extra time is the **build-ahead**: peak
   demand that later orders cannot cover in time.
2. **Levels** from the forecaster's demand distribution over that cover, in operational time
   (see :mod:`inventory.ordering.levels`), with the lead-time spread: a periodic
   review order-up-to level S reaching the fill target (the policy module's exact cycle
   fill; negative binomial or Poisson for slow movers, never a normal approximation unless
   the forecaster gives a normal), or, where ordering costs matter (the EOQ exceeds a
   review period's demand), a reorder point s with the EOQ as order quantity.
   Fill targets per ABC class (by annual usage value) or per part; with
   ``pooling="class"`` the levels of a class meet its target pooled
   (:func:`inventory.ordering.policy.pooled_order_up_to_levels`).
3. **Supplier.** Per part the candidate that meets the need date at the least landed cost
   per unit needed (the rounded need's value over the need at the part's own target); if
   none meets it, the fastest. The reason names the alternatives.
4. **Raw need** = level - (usable on hand + on order); kits are covered the cheaper way
   (:mod:`inventory.ordering.kits`).
5. **Rounding** to whole packs and the minimum order quantity, capped by shelf life (no more
   than the expected use before the new lot's ISO 2230 storage limit, less a margin; a
   minimum above the cap is ordered and flagged), topped up to each supplier's minimum
   order value by marginal analysis.
6. **Budget** (optional): spent where each currency unit fills the most expected units
   (:func:`inventory.ordering.rules.greedy_budget`); a supplier whose order would
   fall below its minimum is dropped and the money spent elsewhere.
7. **Service**: the expected pooled fill over each part's coming review window, against the
   target, before and after the budget.
"""

from __future__ import annotations

import math
from collections import defaultdict
from dataclasses import dataclass
from datetime import date, timedelta
from decimal import Decimal

import numpy as np
from numpy.typing import NDArray

from inventory.forecast.distributions import DemandDistribution
from inventory.ordering import policy
from inventory.ordering.calendar import DemandCalendar, add_days, position_to_day, positions
from inventory.ordering.kits import KitDecision, decide_kits
from inventory.ordering.levels import (
    cover_distribution,
    cycle_service_levels,
    economic_order_quantity,
    filled_units,
    operational_times,
    reorder_point_for_fill,
)
from inventory.ordering.model import (
    Plan,
    PlanLine,
    PlanOptions,
    PlanRequest,
    SupplierOrder,
    SupplierTerms,
    SupplyOption,
    Uncovered,
)
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
from inventory.ordering.text import line_sentence, policy_phrase
from inventory.stock.valuation import abc_classes

FloatArray = NDArray[np.float64]
IntArray = NDArray[np.int64]

__all__ = ["plan_orders", "PlanningError"]


class PlanningError(ValueError):
    """Input the planner cannot work with (a season start in the past, a budget below every
    supplier's minimum order, a target outside 0..1)."""


# -- validation ----------------------------------------------------------------------------------


def _check(req: PlanRequest, opt: PlanOptions) -> None:
    if opt.season_start is not None and opt.season_start <= req.as_of:
        raise PlanningError(f"season start {opt.season_start.isoformat()} is not after the plan "
                            f"date {req.as_of.isoformat()}")
    targets = dict(opt.class_targets) | dict(opt.part_targets)
    if opt.fill_rate is not None:
        targets["all"] = opt.fill_rate
    for key, t in targets.items():
        if not 0.0 < float(t) < 1.0:
            raise PlanningError(f"fill-rate target for {key} must be between 0 and 1, got {t}")
    if opt.budget is not None and opt.budget < 0:
        raise PlanningError(f"budget must be 0 or more, got {opt.budget}")
    for o in req.options:
        if o.supplier not in req.suppliers:
            raise PlanningError(f"supply option for {o.part} names unknown supplier "
                                f"{o.supplier!r}")
        if o.unit_cost < 0:
            raise PlanningError(f"{o.supplier} {o.part}: unit cost must be 0 or more")


# -- candidates and their timing ------------------------------------------------------------------


@dataclass
class _Cands:
    part: IntArray
    opt: list[SupplyOption]
    sup: list[SupplierTerms]
    lead: FloatArray
    sd: FloatArray
    cycle: FloatArray
    peak: FloatArray
    landed: list[Decimal]
    landed_f: FloatArray
    pack: IntArray
    moq: IntArray
    minimum: IntArray


def _candidates(req: PlanRequest, opt: PlanOptions, index: dict[str, int]) -> _Cands:
    rows = [o for o in req.options if o.part in index]
    sups = [req.suppliers[o.supplier] for o in rows]
    lead = np.array([float(o.lead_time_days if o.lead_time_days is not None
                           else s.lead_time_days) for o, s in zip(rows, sups, strict=True)])
    sd = np.array([float(s.lead_time_sd_days) for s in sups])
    cycle = np.array([float(s.order_cycle_days) for s in sups])
    peak = np.array([
        float(s.peak_lead_time_days) if s.peak_lead_time_days is not None
        else lead[i] + opt.peak_lead_sd * sd[i] for i, s in enumerate(sups)])
    landed = [o.unit_cost * (1 + s.landed_surcharge) for o, s in zip(rows, sups, strict=True)]
    pack = np.array([max(int(o.pack_size), 1) for o in rows], dtype=np.int64)
    moq = np.array([max(int(o.min_order_qty), 1) for o in rows], dtype=np.int64)
    minimum = np.maximum(-(-moq // pack), 1) * pack
    return _Cands(np.array([index[o.part] for o in rows], dtype=np.int64), rows, sups, lead, sd,
                  cycle, np.maximum(peak, lead), landed,
                  np.array([float(x) for x in landed]), pack, moq, minimum)


@dataclass
class _Timing:
    arrival: NDArray[np.datetime64]
    order_by: NDArray[np.datetime64]
    cover_end: NDArray[np.datetime64]
    need: NDArray[np.datetime64]
    late: NDArray[np.bool_]
    demand_lead: FloatArray
    demand_review: FloatArray
    cover_months: FloatArray
    build_ahead: FloatArray
    gap_demand: FloatArray


def _timing(req: PlanRequest, opt: PlanOptions, cal: DemandCalendar, c: _Cands,
            usable: FloatArray) -> _Timing:
    as_of = np.datetime64(req.as_of, "D")
    a0 = float(positions([req.as_of], cal.month0)[0])
    rows = np.arange(cal.monthly.shape[0])
    run_out = position_to_day(cal.month0, cal.run_out(rows, a0, usable))[c.part]
    earliest = add_days(as_of, c.lead)
    if opt.season_start is None:
        arrival = earliest
        order_by = np.full(c.part.shape, as_of)
        need = run_out
        strict = ~np.isnat(need) & (arrival > need)
    else:
        season = np.datetime64(opt.season_start, "D")
        need = np.where(np.isnat(run_out) | (run_out > season), season, run_out)
        arrival = np.maximum(need, earliest)
        order_by = arrival - np.ceil(c.lead - 1e-9).astype("timedelta64[D]")
        strict = need < earliest
    if opt.season_start is None:
        cover_end = add_days(order_by, c.cycle + c.lead)
        regular_end = cover_end
    else:
        # the next possible delivery after the season start: an order placed one review
        # after this one, taking the season's lead time (an order placed early for a part
        # that runs out before the season still covers through the season start)
        start = np.maximum(arrival, np.datetime64(opt.season_start, "D"))
        regular_end = add_days(start, c.cycle)
        cover_end = add_days(start, c.cycle + (c.peak - c.lead))
    p_arr = positions(arrival, cal.month0)
    p_end = positions(cover_end, cal.month0)
    e_lead = cal.between(c.part, a0, p_arr)
    e_rev = cal.between(c.part, p_arr, p_end)
    ahead = cal.between(c.part, positions(regular_end, cal.month0), p_end)
    # late only where the gap between the need date and the delivery holds real demand
    p_need = positions(np.where(np.isnat(need), arrival, need), cal.month0)
    gap = np.where(strict, cal.between(c.part, p_need, p_arr), 0.0)
    late = strict & (gap >= opt.late_units)
    if opt.season_start is None:
        ahead = np.zeros_like(ahead)
    return _Timing(arrival, order_by, cover_end, need, late, e_lead, e_rev, p_end - a0, ahead,
                   gap)


# -- levels ----------------------------------------------------------------------------------------


@dataclass
class _Levels:
    dist: DemandDistribution
    lead_op: FloatArray
    review_op: FloatArray
    level: FloatArray  # S, or s for the reorder-point lines (unrounded for normal demand)
    level_int: IntArray
    lead_quantile: FloatArray
    eoq: FloatArray
    order_qty: IntArray
    use_sq: NDArray[np.bool_]
    raw: IntArray


def _levels(req: PlanRequest, opt: PlanOptions, cal: DemandCalendar, c: _Cands, t: _Timing,
            a0: float) -> _Levels:
    """Distributions, operational times and EOQs of every candidate; the levels themselves
    are filled in by :func:`_set_levels` only where needed."""
    rate, lead_op, review_op = operational_times(t.demand_lead, t.demand_review, t.cover_months)
    base = req.forecast.dist.take(c.part)
    dist = cover_distribution(base, rate, t.cover_months,
                              lead_time_sd=c.sd / opt.days_per_month)
    annual = cal.between(c.part, a0, a0 + 12.0)
    order_cost = np.array([float(s.order_cost if s.order_cost is not None
                                 else opt.line_order_cost) for s in c.sup])
    q_star = economic_order_quantity(annual, order_cost, c.landed_f, opt.carrying_rate)
    use_sq = (q_star > 0) & (rate > 0) & (q_star > opt.eoq_ratio * t.demand_review)
    q_int = np.maximum(np.ceil(q_star / c.pack - 1e-9).astype(np.int64) * c.pack, c.minimum)
    n = c.part.size
    return _Levels(dist, lead_op, review_op, np.zeros(n), np.zeros(n, dtype=np.int64),
                   np.zeros(n), q_star, np.where(use_sq, q_int, 0), use_sq,
                   np.zeros(n, dtype=np.int64))


def _set_levels(lv: _Levels, rows: IntArray, opt: PlanOptions, tgt: FloatArray,
                position: IntArray) -> None:
    """Levels and raw needs of candidates ``rows`` with each part's own target ``tgt``
    (per candidate): the order-up-to level, or the reorder point where the EOQ applies."""
    if rows.size == 0:
        return
    d = lv.dist.take(rows)
    lt, rp = lv.lead_op[rows], lv.review_op[rows]
    if opt.service == "fill":
        level = policy.order_up_to_levels(d, tgt, lead_time=lt, review_period=rp).astype(float)
    else:
        level = cycle_service_levels(d, tgt, lt + rp)
    sq = lv.use_sq[rows] & (opt.season_start is None)
    if sq.any():
        idx = np.flatnonzero(sq)
        prot = lt[idx] + rp[idx]
        if opt.service == "fill":
            s = reorder_point_for_fill(d.take(idx), lv.order_qty[rows][idx], tgt[idx],
                                       protection=prot)
        else:
            s = cycle_service_levels(d.take(idx), tgt[idx], prot)
        level[idx] = np.maximum(s, opt.min_reorder_point)
    lv.level[rows] = level
    lv.level_int[rows] = np.ceil(level - 1e-9).astype(np.int64)
    _update_raw(lv, rows, opt, position)


def _update_raw(lv: _Levels, rows: IntArray, opt: PlanOptions, position: IntArray) -> None:
    """``position`` is per candidate row."""
    lv.raw[rows] = _raw_need(opt, lv.level_int[rows], position[rows], lv.use_sq[rows],
                             np.maximum(lv.order_qty[rows], 1))


def _raw_need(opt: PlanOptions, level: IntArray, position: IntArray, use_sq: NDArray[np.bool_],
              q_int: IntArray) -> IntArray:
    up_to = np.maximum(level - position, 0)
    if opt.season_start is not None:
        return np.where(use_sq & (up_to > 0), np.maximum(up_to, q_int), up_to)
    n_q = np.where(position <= level, -(-(level + 1 - position) // np.maximum(q_int, 1)), 0)
    return np.where(use_sq, n_q * q_int, up_to)


def _rounded_cost(raw: IntArray, c: _Cands) -> FloatArray:
    q = np.where(raw > 0, np.maximum(-(-raw // c.pack) * c.pack, c.minimum), 0)
    return q * c.landed_f


# -- supplier choice -------------------------------------------------------------------------------


def _choose(c: _Cands, t: _Timing, lv: _Levels) -> tuple[IntArray, dict[int, str]]:
    """Index of the chosen candidate per part that has any, and the reason per part: the
    least landed cost per unit needed (the rounded order's landed value over the raw need,
    so a big pack counts against a small need) among the candidates delivering in time,
    else the earliest delivery."""
    if c.part.size == 0:
        return np.zeros(0, dtype=np.int64), {}
    cost = _rounded_cost(lv.raw, c)
    per_unit = np.where(lv.raw > 0, cost / np.maximum(lv.raw, 1), c.landed_f)
    arr = t.arrival.astype(np.int64)
    rank = np.array([o.supplier for o in c.opt])
    late = t.late.astype(np.int64)
    order = np.lexsort((rank, c.lead, np.where(late == 1, 0.0, per_unit),
                        np.where(late == 1, arr, 0), late, c.part))
    parts_sorted = c.part[order]
    first = np.r_[True, parts_sorted[1:] != parts_sorted[:-1]]
    chosen = order[first]
    groups: dict[int, list[int]] = defaultdict(list)
    for k in order:
        groups[int(c.part[k])].append(int(k))
    reasons: dict[int, str] = {}
    for p, ks in groups.items():
        best = ks[0]
        if len(ks) == 1:
            reasons[p] = "only source" + (", and late" if t.late[best] else "")
            continue

        def alt(k: int) -> str:
            price = f"{per_unit[k]:.2f} per unit needed" if lv.raw[k] > 0 else \
                f"{c.landed[k]:.4f} each"
            return f"{c.opt[k].supplier} {price}" + (f", late at {c.lead[k]:.0f} d"
                                                     if t.late[k] else "")

        alts = "; ".join(alt(k) for k in ks[1:])
        need = t.need[best]
        by = "" if np.isnat(need) else f" by {str(need)}"
        on_time = int(sum(1 for k in ks if not t.late[k]))
        if t.late[best]:
            reasons[p] = (f"no source delivers{by}; the fastest of {len(ks)}, "
                          f"{c.lead[best]:.0f} d ({alts})")
        elif lv.raw[best] > 0:
            lead = (f"cheapest of {on_time} sources delivering{by}" if on_time > 1
                    else f"the only one of {len(ks)} sources delivering{by}")
            reasons[p] = f"{lead}, {per_unit[best]:.2f} per unit needed ({alts})"
        else:
            reasons[p] = f"lowest unit cost of {len(ks)} sources ({alts})"
    return chosen, reasons


# -- the planner -----------------------------------------------------------------------------------


def _targets(codes: tuple[str, ...], annual_value: FloatArray, opt: PlanOptions
             ) -> tuple[FloatArray, list[str], list[str]]:
    """Fill target, ABC class and pooling group per part."""
    classes = abc_classes(list(annual_value), a_share=opt.abc_shares[0],
                          b_share=opt.abc_shares[1])
    out = np.empty(len(codes))
    groups = []
    for i, code in enumerate(codes):
        if code in opt.part_targets:
            out[i] = opt.part_targets[code]
            groups.append(f"part:{code}")
        elif opt.fill_rate is not None:
            out[i] = opt.fill_rate
            groups.append("all")
        else:
            out[i] = opt.class_targets.get(classes[i], opt.class_targets.get("C", 0.9))
            groups.append(f"class:{classes[i]}")
    return out, classes, groups


def plan_orders(req: PlanRequest, opt: PlanOptions | None = None) -> Plan:
    """Purchase orders per supplier with a reason on every line (module docstring)."""
    opt = opt or PlanOptions()
    _check(req, opt)
    fc = req.forecast
    codes = tuple(fc.codes)
    index = {code: i for i, code in enumerate(codes)}
    n = len(codes)
    monthly = np.asarray(fc.monthly_mean, dtype=float)
    seen = (np.nansum(monthly, axis=1) > 0) if fc.seen is None else np.asarray(fc.seen, bool)
    monthly = np.where(seen[:, None], np.nan_to_num(monthly), 0.0)
    cal = DemandCalendar.build(fc.month0, monthly, months=opt.horizon_months)
    a0 = float(positions([req.as_of], cal.month0)[0])
    stock = [req.stock.get(code) for code in codes]
    on_hand = np.array([s.on_hand if s else 0 for s in stock], dtype=np.int64)
    on_order = np.array([s.on_order if s else 0 for s in stock], dtype=np.int64)
    position = on_hand + on_order

    c = _candidates(req, opt, index)
    cheapest = np.full(n, np.inf)
    np.minimum.at(cheapest, c.part, c.landed_f)
    annual = cal.between(np.arange(n), a0, a0 + 12.0)
    targets, classes, groups = _targets(codes, annual * np.where(np.isfinite(cheapest),
                                                                   cheapest, 0.0), opt)
    t = _timing(req, opt, cal, c, position.astype(float))
    lv = _levels(req, opt, cal, c, t, a0)
    pos_c = position[c.part]
    counts = np.bincount(c.part, minlength=n)
    # the sources of a part are compared on their needs at the part's own target; the
    # chosen source's level is then set for the plan (pooled per class by default)
    multi = np.flatnonzero(counts[c.part] > 1)
    _set_levels(lv, multi, opt, targets[c.part[multi]], pos_c)
    chosen, choice_reason = _choose(c, t, lv)

    pooled = opt.service == "fill" and opt.pooling == "class"
    if pooled and chosen.size:
        sq = chosen[lv.use_sq[chosen] & (opt.season_start is None)]
        _pool_levels(lv, chosen, [groups[int(p)] for p in c.part[chosen]],
                     targets[c.part[chosen]], opt)
        _set_levels(lv, sq, opt, targets[c.part[sq]], pos_c)
        _update_raw(lv, chosen, opt, pos_c)
    else:
        single = chosen[counts[c.part[chosen]] == 1]
        _set_levels(lv, single, opt, targets[c.part[single]], pos_c)
    lv.lead_quantile[chosen] = cycle_service_levels(lv.dist.take(chosen),
                                                    targets[c.part[chosen]],
                                                    lv.lead_op[chosen])

    # kits: the cheaper way
    by_part = {int(c.part[k]): int(k) for k in chosen}
    kit_codes = {k.code for k in req.kits}
    need_map = {codes[p]: int(lv.raw[k]) for p, k in by_part.items() if codes[p] in kit_codes}
    landed_map = {codes[p]: c.landed[k] for p, k in by_part.items()}
    surplus = {codes[p]: int(position[p] - max(lv.level_int[k], 0)) for p, k in by_part.items()}
    decisions = decide_kits(req.kits, need_map, landed_map, surplus, mode=opt.kit_mode,
                            assembly_cost=opt.assembly_cost) if req.kits else []
    # for_kits: loose units added to a part's need for kits assembled from loose seals on
    # this plan; assembled: kits of a kit's need assembled instead of bought; to_kits: spare
    # loose units that go into kits assembled from stock
    kit_units = {name: np.zeros(n, dtype=np.int64) for name in ("for_kits", "assembled",
                                                                 "to_kits")}
    use = cal.monthly.copy()  # expected use, with the demand of kits assembled from loose seals
    bom = {k.code: k for k in req.kits}
    for d in decisions:
        if d.how in ("assemble", "whole") and d.kit in index:
            kit_units["assembled"][index[d.kit]] = d.from_stock + d.from_loose
        if not (d.from_stock or d.from_loose):
            continue  # bought whole: the loose seals are untouched (and may be unknown)
        for part, q in bom[d.kit].lines:
            kit_units["to_kits"][index[part]] += d.from_stock * q
        for part, units in d.adds.items():
            kit_units["for_kits"][index[part]] += units
        for part, units in d.from_surplus.items():
            kit_units["to_kits"][index[part]] += units  # held units that go into kits
        if d.from_loose:
            for part, q in bom[d.kit].lines:
                use[index[part]] += q * cal.monthly[index[d.kit]]
    cal_use = DemandCalendar(cal.month0, use)

    return _finish(req, opt, cal, cal_use, c, t, lv, chosen, choice_reason, targets, classes,
                   pooled, position, on_hand, on_order, kit_units, decisions, seen, a0)


def _pool_levels(lv: _Levels, chosen: IntArray, groups: list[str], targets: FloatArray,
                 opt: PlanOptions) -> None:
    """Order-up-to levels of the chosen candidates meeting each group's target POOLED
    (:func:`inventory.ordering.policy.pooled_order_up_to_levels`, every part of a group at
    the same per-part target); reorder-point lines are set apart by the caller."""
    sel = ~(lv.use_sq[chosen] & (opt.season_start is None)) & (lv.dist.mean[chosen] > 0)
    lv.level[chosen[lv.dist.mean[chosen] <= 0]] = 0.0
    lv.level_int[chosen[lv.dist.mean[chosen] <= 0]] = 0
    rows = chosen[sel]
    if rows.size == 0:
        return
    g = np.array(groups, dtype=object)[sel].astype(str)
    labels = np.unique(g)
    tg = np.array([float(targets[sel][g == lab][0]) for lab in labels])
    # uniform pooling never sets a part above the group's own target (each part's fill is
    # at least the common per-part target, so the pooled fill reaches the group target at
    # or below it): the levels need searching only up to the highest target
    top = min(float(tg.max()) + 0.002, 0.9999)
    levels = policy.pooled_order_up_to_levels(
        lv.dist.take(rows), tg, groups=g, method="uniform",
        lead_time=lv.lead_op[rows], review_period=lv.review_op[rows], top_fill=top)
    lv.level[rows] = levels
    lv.level_int[rows] = levels


def _finish(req, opt, cal, cal_use, c, t, lv, chosen, choice_reason, targets, classes, pooled,
            position, on_hand, on_order, kit_units, decisions, seen, a0) -> Plan:
    codes = tuple(req.forecast.codes)
    ch = np.asarray(chosen, dtype=np.int64)
    ch = ch[np.argsort(c.part[ch], kind="stable")]
    parts = c.part[ch]
    scale = money_scale([c.landed[k] for k in ch] + [c.opt[k].unit_cost for k in ch]
                        + [s.min_order_value for s in req.suppliers.values()]
                        + ([opt.budget] if opt.budget is not None else []))
    price = [to_units(c.opt[k].unit_cost, scale) for k in ch]

    # rounding and the shelf-life cap
    rounding: list[Rounded] = []
    caps: list[int | None] = []
    limits = _shelf_limits(req, opt, c, ch, parts, codes, t)
    has_limit = np.array([lim is not None for lim, _ in limits], dtype=bool)
    use = np.zeros(len(ch))
    if has_limit.any():
        sel = np.flatnonzero(has_limit)
        days = np.array([limits[j][0] for j in sel], dtype="datetime64[D]")
        use[sel] = cal_use.between(parts[sel], a0, positions(days, cal.month0))
        before = days <= t.arrival[ch[sel]]
        use[sel[before]] = 0.0
    for_kits, assembled = kit_units["for_kits"], kit_units["assembled"]
    to_kits = kit_units["to_kits"]
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
    topped = _top_up_minimums(req, opt, cal, c, lv, ch, parts, qty, price, caps, position,
                              for_kits, scale, a0)
    qty = qty + topped
    before_budget = qty.copy()

    # the budget
    blocked_suppliers: list[str] = []
    if opt.budget is not None:
        qty, blocked_suppliers = _spend_budget(req, opt, c, lv, ch, parts, qty, price, position,
                                               scale)
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
    tgt_ch = targets[parts]
    service_target = float((weight * tgt_ch).sum() / wsum) if wsum > 0 else float(
        tgt_ch.mean() if tgt_ch.size else 0.0)
    expected = float((weight * fill).sum() / wsum) if wsum > 0 else 1.0
    expected_before = float((weight * fill_budget).sum() / wsum) if wsum > 0 else 1.0

    col = _columns(req, opt, c, t, lv, ch, parts, codes, classes, targets, position, on_hand,
                   on_order, kit_units)
    lines: list[PlanLine] = []
    uncovered: list[Uncovered] = []
    qty_l, top_l, cut_l = qty.tolist(), topped.tolist(), budget_cut.tolist()
    fill_l, fcap_l = fill.tolist(), fill_caps.tolist()
    for j in range(len(ch)):
        line, unc = _line(req, opt, c, col, j, pooled, rounding[j], caps[j], limits[j],
                          qty_l[j], top_l[j], cut_l[j], fill_l[j], fcap_l[j],
                          choice_reason.get(col["p"][j], ""), blocked_suppliers)
        lines.append(line)
        uncovered.extend(unc)
    uncovered.extend(_no_supplier(req, cal, c, codes, position, seen, a0))
    for d in decisions:
        if d.how == "none":
            uncovered.append(Uncovered(d.kit, d.need, d.reason))
    orders = _orders(req, lines)
    spent = sum((o.total for o in orders), Decimal("0"))
    return Plan(req.as_of, opt.season_start, tuple(orders), tuple(lines), tuple(uncovered),
                tuple(decisions), service_target, expected, expected_before, opt.budget,
                spent, opt)


def _shelf_limits(req, opt, c, ch, parts, codes, t) -> list[tuple[date | None, str | None]]:
    """Use-by day and assumed cure quarter of the new lot of each chosen line (cached per
    arrival day, material and cure age: many lines share them)."""
    cache: dict[tuple, tuple[date | None, str | None]] = {}
    out = []
    arrivals = t.arrival[ch].tolist()
    for j, k in enumerate(ch.tolist()):
        st = req.stock.get(codes[int(parts[j])])
        age = c.opt[k].cure_age_days
        key = (arrivals[j], st.material if st else None,
               opt.cure_age_days if age is None else age)
        if key not in cache:
            cache[key] = new_lot_limit(key[0], key[1], cure_age_days=key[2],
                                       margin_days=opt.shelf_margin_days)
        out.append(cache[key])
    return out


def _top_up_minimums(req, opt, cal, c, lv, ch, parts, qty, price, caps, position, for_kits,
                     scale, a0) -> IntArray:
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
            if caps[j] is not None:
                ceiling = min(ceiling, caps[j])
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


def _spend_budget(req, opt, c, lv, ch, parts, qty, price, position, scale
                  ) -> tuple[IntArray, list[str]]:
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


def _columns(req, opt, c, t, lv, ch, parts, codes, classes, targets, position, on_hand,
             on_order, kit_units) -> dict[str, list]:
    """The chosen lines' figures as plain Python lists (one entry per line), so building
    thousands of lines does not index numpy arrays one scalar at a time."""
    as_of = np.datetime64(req.as_of, "D")
    need = t.need[ch]
    return {
        "k": ch.tolist(), "p": parts.tolist(), "code": [codes[p] for p in parts.tolist()],
        "abc": [classes[p] for p in parts.tolist()], "target": targets[parts].tolist(),
        "use_sq": lv.use_sq[ch].tolist(), "level": lv.level[ch].tolist(),
        "order_qty": lv.order_qty[ch].tolist(), "eoq": lv.eoq[ch].tolist(),
        "lead_q": lv.lead_quantile[ch].tolist(), "raw": lv.raw[ch].tolist(),
        "cover_end": t.cover_end[ch].tolist(), "arrival": t.arrival[ch].tolist(),
        "order_by": t.order_by[ch].tolist(),
        "need": [None if np.isnat(x) else x.item() for x in need],
        "late": t.late[ch].tolist(), "gap": t.gap_demand[ch].tolist(),
        "ahead": t.build_ahead[ch].tolist(),
        "fcover": (t.demand_lead[ch] + t.demand_review[ch]).tolist(),
        "cover_days": (t.cover_end[ch] - as_of).astype(np.int64).tolist(),
        "lead": c.lead[ch].tolist(), "sd": c.sd[ch].tolist(), "cycle": c.cycle[ch].tolist(),
        "peak": c.peak[ch].tolist(), "pack": c.pack[ch].tolist(), "moq": c.moq[ch].tolist(),
        "minimum": c.minimum[ch].tolist(), "on_hand": on_hand[parts].tolist(),
        "on_order": on_order[parts].tolist(), "position": position[parts].tolist(),
        **{name: arr[parts].tolist() for name, arr in kit_units.items()},
    }


def _line(req, opt, c, col, j, pooled, r: Rounded, cap, limit, qty, topped, cut, fill,
          fill_caps, choice, blocked) -> tuple[PlanLine, list[Uncovered]]:
    k = col["k"][j]
    code = col["code"][j]
    o, s = c.opt[k], c.sup[k]
    st = req.stock.get(code)
    use_sq = col["use_sq"][j]
    policy_name = ("pre-season" if opt.season_start is not None
                   else "reorder-point" if use_sq else "order-up-to")
    flags = [name for name, on in (("shelf_life", r.capped), ("min_forced", r.min_forced),
                                   ("top_up", topped), ("budget", cut),
                                   ("late", col["late"][j])) if on]
    value = (o.unit_cost * qty).quantize(Decimal("0.01"))
    pack = col["pack"][j]
    packs = qty // pack
    need_date, arrival = col["need"][j], col["arrival"][j]
    pol = policy_phrase(
        policy=policy_name, level=col["level"][j], order_quantity=col["order_qty"][j],
        eoq=col["eoq"][j], fill_target=col["target"][j], abc=col["abc"][j],
        pooled=pooled and not use_sq, service=opt.service, lead_quantile=col["lead_q"][j],
        cover_end=col["cover_end"][j], build_ahead=col["ahead"][j])
    raw, for_kits = col["raw"][j], col["for_kits"][j]
    assembled, to_kits = col["assembled"][j], col["to_kits"][j]
    expired = st.expired if st else 0
    sentence = line_sentence(
        part=code, supplier=o.supplier, choice=choice, forecast_cover=col["fcover"][j],
        cover_days=float(col["cover_days"][j]), lead_days=col["lead"][j],
        lead_sd_days=col["sd"][j], review_days=col["cycle"][j],
        peak_days=col["peak"][j] if opt.season_start is not None else None,
        policy_text=pol, on_hand=col["on_hand"][j], expired=expired,
        on_order=col["on_order"][j], raw_need=raw, for_kits=for_kits, assembled=assembled,
        to_kits=to_kits, qty=qty,
        packs=packs, pack=pack, minimum=col["minimum"][j], rounded=r.rounded,
        shelf_cap=cap, shelf_limit=limit[0], cure_assumed=limit[1], capped=r.capped,
        min_forced=r.min_forced, topped_up=topped, min_order_value=s.min_order_value,
        budget_cut=cut, late=col["late"][j], need_date=need_date, arrival=arrival,
        unit_cost=o.unit_cost, value=value, currency=s.currency, fill=fill,
        fill_before=fill_caps)
    line = PlanLine(
        part=code, description=st.description if st else "", supplier=o.supplier,
        supplier_code=o.supplier_code, policy=policy_name, abc=col["abc"][j],
        fill_target=col["target"][j], unit_cost=o.unit_cost,
        landed_cost=c.landed[k], pack_size=pack, min_order_qty=col["moq"][j],
        qty=qty, packs=packs, value=value, forecast_cover=col["fcover"][j],
        cover_days=float(col["cover_days"][j]), lead_days=col["lead"][j],
        lead_sd_days=col["sd"][j], review_days=col["cycle"][j],
        lead_quantile=col["lead_q"][j], level=col["level"][j],
        order_quantity=col["order_qty"][j], eoq=col["eoq"][j], on_hand=col["on_hand"][j],
        expired=expired, on_order=col["on_order"][j], position=col["position"][j],
        raw_need=raw, for_kits=for_kits, assembled=assembled, to_kits=to_kits,
        rounded=r.rounded, minimum=col["minimum"][j],
        shelf_cap=cap, shelf_limit=limit[0], cure_assumed=limit[1], caps=tuple(flags),
        topped_up=topped, budget_cut=cut, expected_fill=fill, fill_before_caps=fill_caps,
        need_date=need_date, arrival=arrival, order_by=col["order_by"][j],
        build_ahead=col["ahead"][j], supplier_choice=choice, reason=sentence)
    unc: list[Uncovered] = []
    need = max(raw - assembled, 0) + for_kits
    if need > 0 and qty < need:
        if cut and qty == 0 and o.supplier in blocked:
            why = (f"budget: {o.supplier}'s order would fall below its minimum "
                   f"{s.min_order_value:.2f} within the budget")
        elif cut:
            why = f"budget: {qty} of {need} units bought; each euro filled more elsewhere"
        elif r.capped:
            why = (f"shelf life: at most {cap} can be used before {limit[0]}; expected fill "
                   f"{fill:.1%} instead of {fill_caps:.1%}")
        else:
            why = "not ordered"
        unc.append(Uncovered(code, need - qty, why, o.supplier))
    if col["late"][j] and need > 0 and need_date is not None:
        gap = max((arrival - need_date).days, 0)
        unc.append(Uncovered(code, int(math.ceil(col["gap"][j] - 1e-9)),
                             f"late: stock runs out about {need_date}, the earliest delivery "
                             f"({o.supplier}, {col['lead'][j]:.0f} d) is {arrival}, {gap} d "
                             "later; the expected demand in between waits", o.supplier))
    return line, unc


def _no_supplier(req, cal, c, codes, position, seen, a0, months: float = 3.0
                 ) -> list[Uncovered]:
    has = np.zeros(len(codes), dtype=bool)
    has[c.part] = True
    out: list[Uncovered] = []
    rows = np.flatnonzero(~has & seen)
    if rows.size == 0:
        return out
    demand = cal.between(rows, a0, a0 + months)
    for i, p in enumerate(rows):
        need = int(math.ceil(demand[i] - position[p] - 1e-9))
        if demand[i] <= 0:
            continue
        out.append(Uncovered(codes[p], max(need, 0),
                             f"no supplier item: expected demand {demand[i]:.1f} over the next "
                             f"{months:.0f} months, on hand and on order {int(position[p])}"))
    return out


def _orders(req: PlanRequest, lines: list[PlanLine]) -> list[SupplierOrder]:
    by_sup: dict[str, list[PlanLine]] = defaultdict(list)
    for ln in lines:
        if ln.qty > 0:
            by_sup[ln.supplier].append(ln)
    out = []
    for sup in sorted(by_sup):
        terms = req.suppliers[sup]
        ls = sorted(by_sup[sup], key=lambda x: x.part)
        order_by = max(min(x.order_by for x in ls), req.as_of)
        total = sum((x.value for x in ls), Decimal("0"))
        arrival = order_by + timedelta(days=math.ceil(terms.lead_time_days))
        note = ""
        if total < terms.min_order_value:
            note = (f"below the minimum order value {terms.min_order_value:.2f} "
                    f"{terms.currency}: no line can take more within its shelf life and a "
                    "year's cover")
        out.append(SupplierOrder(sup, terms.name, terms.currency, order_by, arrival, tuple(ls),
                                 total, terms.min_order_value, note))
    return out


__all__ += ["KitDecision"]
