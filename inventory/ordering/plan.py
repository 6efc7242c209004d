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

import numpy as np

from inventory.ordering.calendar import DemandCalendar, positions
from inventory.ordering.kits import KitDecision
from inventory.ordering.model import Plan, PlanOptions, PlanRequest
from inventory.ordering.plan_choice import choose_sources, cover_kits, fill_targets
from inventory.ordering.plan_lines import build_plan
from inventory.ordering.plan_money import order_quantities
from inventory.ordering.plan_state import (
    PlanningError,
    PlanState,
    _candidates,
    _levels,
    _timing,
)

__all__ = ["plan_orders", "PlanningError", "KitDecision"]

# The steps live in: plan_state (candidates, timing, levels; the state they share),
# plan_choice (targets, supplier choice, pooled levels, kits), plan_money (rounding, shelf
# life, supplier minimums, budget, expected fill) and plan_lines (lines, sentences, orders).


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


# -- the planner -----------------------------------------------------------------------------------


def plan_orders(req: PlanRequest, opt: PlanOptions | None = None) -> Plan:
    """Purchase orders per supplier with a reason on every line (module docstring)."""
    opt = opt or PlanOptions()
    _check(req, opt)
    st = _start(req, opt)
    choose_sources(st)
    cover_kits(st)
    return build_plan(st, order_quantities(st))


def _start(req: PlanRequest, opt: PlanOptions) -> PlanState:
    """Steps 1 and 2 for every candidate: demand calendar, stock, targets, timing, levels."""
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
    targets, classes, groups = fill_targets(codes, annual * np.where(np.isfinite(cheapest),
                                                                      cheapest, 0.0), opt)
    t = _timing(req, opt, cal, c, position.astype(float))
    lv = _levels(req, opt, cal, c, t, a0)
    return PlanState(req, opt, codes, index, cal, a0, on_hand, on_order, position, seen, c, t,
                     lv, targets, classes, groups)
