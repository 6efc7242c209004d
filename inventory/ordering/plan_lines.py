"""Planner: the plan's lines, each with its reason, the orders per supplier and what could
not be covered, from the :class:`~inventory.ordering.plan_state.PlanState` and the
:class:`~inventory.ordering.plan_money.OrderQuantities`."""

from __future__ import annotations

import math
from collections import defaultdict
from dataclasses import replace
from datetime import timedelta
from decimal import Decimal

import numpy as np

from inventory.ordering.model import Plan, PlanLine, PlanRequest, SupplierOrder, Uncovered
from inventory.ordering.plan_money import OrderQuantities
from inventory.ordering.plan_state import PlanState
from inventory.ordering.text import line_sentence, policy_phrase


def build_plan(st: PlanState, q: OrderQuantities) -> Plan:
    """The plan: one line per chosen source, the orders, what is not covered."""
    req, opt = st.req, st.opt
    col = _columns(st)
    lines: list[PlanLine] = []
    uncovered: list[Uncovered] = []
    for j in range(len(st.ch)):
        line = _line(st, col, q, j)
        lines.append(line)
        uncovered.extend(_short(st, q, line, j))
    uncovered.extend(_no_supplier(st))
    for d in st.decisions:
        if d.how == "none":
            uncovered.append(Uncovered(d.kit, d.need, d.reason))
    orders = _orders(req, lines)
    spent = sum((o.total for o in orders), Decimal("0"))
    return Plan(req.as_of, opt.season_start, tuple(orders), tuple(lines), tuple(uncovered),
                tuple(st.decisions), q.service_target, q.expected, q.expected_before,
                opt.budget, spent, opt)


def _columns(st: PlanState) -> dict[str, list]:
    """The chosen lines' figures as plain Python lists (one entry per line), so building
    thousands of lines does not index numpy arrays one scalar at a time."""
    req, c, t, lv, ch, parts, codes = st.req, st.c, st.t, st.lv, st.ch, st.parts, st.codes
    classes, targets, position = st.classes, st.targets, st.position
    on_hand, on_order, kit_units = st.on_hand, st.on_order, st.kit_units
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


def _line(st: PlanState, col: dict[str, list], q: OrderQuantities, j: int) -> PlanLine:
    """Line ``j`` with its figures and its sentence (:func:`line_sentence`)."""
    opt, c = st.opt, st.c
    k = col["k"][j]
    code = col["code"][j]
    o, s = c.opt[k], c.sup[k]
    stock = st.req.stock.get(code)
    r, cap, limit = q.rounding[j], q.caps[j], q.limits[j]
    qty, topped, cut = int(q.qty[j]), int(q.topped[j]), int(q.cut[j])
    use_sq = col["use_sq"][j]
    policy_name = ("pre-season" if opt.season_start is not None
                   else "reorder-point" if use_sq else "order-up-to")
    flags = [name for name, on in (("shelf_life", r.capped), ("min_forced", r.min_forced),
                                   ("top_up", topped), ("budget", cut),
                                   ("late", col["late"][j])) if on]
    value = (o.unit_cost * qty).quantize(Decimal("0.01"))
    pack = col["pack"][j]
    choice = st.choice_reason.get(col["p"][j], "")
    line = PlanLine(
        part=code, description=stock.description if stock else "", supplier=o.supplier,
        supplier_code=o.supplier_code, policy=policy_name, abc=col["abc"][j],
        fill_target=col["target"][j], unit_cost=o.unit_cost,
        landed_cost=c.landed[k], pack_size=pack, min_order_qty=col["moq"][j],
        qty=qty, packs=qty // pack, value=value, forecast_cover=col["fcover"][j],
        cover_days=float(col["cover_days"][j]), lead_days=col["lead"][j],
        lead_sd_days=col["sd"][j], review_days=col["cycle"][j],
        lead_quantile=col["lead_q"][j], level=col["level"][j],
        order_quantity=col["order_qty"][j], eoq=col["eoq"][j], on_hand=col["on_hand"][j],
        expired=stock.expired if stock else 0, on_order=col["on_order"][j],
        position=col["position"][j], raw_need=col["raw"][j], for_kits=col["for_kits"][j],
        assembled=col["assembled"][j], to_kits=col["to_kits"][j],
        rounded=r.rounded, minimum=col["minimum"][j],
        shelf_cap=cap, shelf_limit=limit[0], cure_assumed=limit[1], caps=tuple(flags),
        topped_up=topped, budget_cut=cut, expected_fill=float(q.fill[j]),
        fill_before_caps=float(q.fill_caps[j]), need_date=col["need"][j],
        arrival=col["arrival"][j], order_by=col["order_by"][j],
        build_ahead=col["ahead"][j], supplier_choice=choice,
        peak_days=col["peak"][j] if opt.season_start is not None else None,
        min_order_value=s.min_order_value, currency=s.currency,
        unit=stock.unit if stock else "each")
    line = replace(line, policy_text=policy_phrase(line, pooled=st.pooled and not use_sq,
                                                   service=opt.service,
                                                   cover_end=col["cover_end"][j]))
    return replace(line, reason=line_sentence(line))


def _short(st: PlanState, q: OrderQuantities, line: PlanLine, j: int) -> list[Uncovered]:
    """What line ``j`` leaves uncovered, and why (the budget, the shelf life, lateness)."""
    unc: list[Uncovered] = []
    need = max(line.raw_need - line.assembled, 0) + line.for_kits
    s = st.c.sup[int(st.ch[j])]
    cap, limit = q.caps[j], q.limits[j]
    qty, cut = line.qty, line.budget_cut
    if need > 0 and qty < need:
        if cut and qty == 0 and line.supplier in q.blocked:
            why = (f"budget: {line.supplier}'s order would fall below its minimum "
                   f"{s.min_order_value:.2f} within the budget")
        elif cut:
            why = f"budget: {qty} of {need} units bought; each euro filled more elsewhere"
        elif q.rounding[j].capped:
            why = (f"shelf life: at most {cap} can be used before {limit[0]}; expected fill "
                   f"{line.expected_fill:.1%} instead of {line.fill_before_caps:.1%}")
        else:
            why = "not ordered"
        unc.append(Uncovered(line.part, need - qty, why, line.supplier))
    if "late" in line.caps and need > 0 and line.need_date is not None:
        gap = max((line.arrival - line.need_date).days, 0)
        unc.append(Uncovered(line.part, int(math.ceil(float(st.t.gap_demand[st.ch[j]]) - 1e-9)),
                             f"late: stock runs out about {line.need_date}, the earliest "
                             f"delivery ({line.supplier}, {line.lead_days:.0f} d) is "
                             f"{line.arrival}, {gap} d later; the expected demand in between "
                             "waits", line.supplier))
    return unc


def _no_supplier(st: PlanState, months: float = 3.0) -> list[Uncovered]:
    """Parts that sold but have no supplier item: what the next ``months`` would need."""
    cal, c, codes, position, seen, a0 = st.cal, st.c, st.codes, st.position, st.seen, st.a0
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
