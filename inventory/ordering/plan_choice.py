"""Planner steps: fill targets per part, the supplier per part, the levels of the chosen
sources (pooled per class), and the kits covered the cheaper way. Each step reads and
writes one :class:`~inventory.ordering.plan_state.PlanState`."""

from __future__ import annotations

from collections import defaultdict

import numpy as np

from inventory.ordering import policy
from inventory.ordering.calendar import DemandCalendar
from inventory.ordering.kits import decide_kits
from inventory.ordering.levels import cycle_service_levels
from inventory.ordering.model import PlanOptions
from inventory.ordering.plan_state import (
    FloatArray,
    IntArray,
    PlanState,
    _Cands,
    _Levels,
    _rounded_cost,
    _set_levels,
    _Timing,
    _update_raw,
)
from inventory.stock.valuation import abc_classes


def choose_sources(st: PlanState) -> None:
    """Step 3: the sources of a part are compared on their needs at the part's own target;
    the chosen source's level is then set for the plan (pooled per class by default)."""
    c, lv, opt, targets = st.c, st.lv, st.opt, st.targets
    pos_c = st.position[c.part]
    counts = np.bincount(c.part, minlength=st.n)
    multi = np.flatnonzero(counts[c.part] > 1)
    _set_levels(lv, multi, opt, targets[c.part[multi]], pos_c)
    chosen, st.choice_reason = _choose(c, st.t, lv)
    st.pooled = opt.service == "fill" and opt.pooling == "class"
    if st.pooled and chosen.size:
        sq = chosen[lv.use_sq[chosen] & (opt.season_start is None)]
        _pool_levels(lv, chosen, [st.groups[int(p)] for p in c.part[chosen]],
                     targets[c.part[chosen]], opt)
        _set_levels(lv, sq, opt, targets[c.part[sq]], pos_c)
        _update_raw(lv, chosen, opt, pos_c)
    else:
        single = chosen[counts[c.part[chosen]] == 1]
        _set_levels(lv, single, opt, targets[c.part[single]], pos_c)
    lv.lead_quantile[chosen] = cycle_service_levels(lv.dist.take(chosen),
                                                    targets[c.part[chosen]],
                                                    lv.lead_op[chosen])
    st.chosen = chosen


def cover_kits(st: PlanState) -> None:
    """Step 4 (kits): each kit's need covered the cheaper way (:mod:`inventory.ordering.kits`).
    ``for_kits``: loose units added to a part's need for kits assembled from loose seals on
    this plan; ``assembled``: kits of a kit's need assembled instead of bought;
    ``to_kits``: loose units already held that go into kits."""
    req, c, lv, codes, index, cal = st.req, st.c, st.lv, st.codes, st.index, st.cal
    by_part = {int(c.part[k]): int(k) for k in st.chosen}
    kit_codes = {k.code for k in req.kits}
    need_map = {codes[p]: int(lv.raw[k]) for p, k in by_part.items() if codes[p] in kit_codes}
    landed_map = {codes[p]: c.landed[k] for p, k in by_part.items()}
    surplus = {codes[p]: int(st.position[p] - max(lv.level_int[k], 0))
               for p, k in by_part.items()}
    decisions = decide_kits(req.kits, need_map, landed_map, surplus, mode=st.opt.kit_mode,
                            assembly_cost=st.opt.assembly_cost) if req.kits else []
    kit_units = {name: np.zeros(st.n, dtype=np.int64) for name in ("for_kits", "assembled",
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
    st.kit_units, st.decisions = kit_units, decisions
    st.cal_use = DemandCalendar(cal.month0, use)


def fill_targets(codes: tuple[str, ...], annual_value: FloatArray, opt: PlanOptions
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
        lv.dist.take(rows), tg, groups=g, lead_time=lv.lead_op[rows],
        review_period=lv.review_op[rows],
        search=policy.PooledSearch(method="uniform", top_fill=top))
    lv.level[rows] = levels
    lv.level_int[rows] = levels
