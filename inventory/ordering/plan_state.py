"""The planner's state and its first steps: the candidates (every supplier item that sells a
part), their timing and their levels. :func:`inventory.ordering.plan.plan_orders` runs the
steps over one :class:`PlanState`; the method is described there."""

from __future__ import annotations

from dataclasses import dataclass, field
from decimal import Decimal

import numpy as np
from numpy.typing import NDArray

from inventory.forecast.distributions import DemandDistribution
from inventory.ordering import policy
from inventory.ordering.calendar import DemandCalendar, add_days, position_to_day, positions
from inventory.ordering.kits import KitDecision
from inventory.ordering.levels import (
    cover_distribution,
    cycle_service_levels,
    economic_order_quantity,
    operational_times,
    reorder_point_for_fill,
)
from inventory.ordering.model import (
    PlanOptions,
    PlanRequest,
    SupplierTerms,
    SupplyOption,
)

FloatArray = NDArray[np.float64]
IntArray = NDArray[np.int64]


class PlanningError(ValueError):
    """Input the planner cannot work with (a season start in the past, a budget below every
    supplier's minimum order, a target outside 0..1)."""


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
    a0 = float(positions(np.array([as_of]), cal.month0)[0])
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


# -- the state the steps share ---------------------------------------------------------------------


@dataclass
class PlanState:
    """Everything the planner's steps read and write, in the order they fill it in.

    Per part (index into ``codes``): stock, targets, ABC class, pooling group. Per candidate
    (index into ``c``): timing ``t`` and levels ``lv``. ``chosen``: the candidate chosen per
    part; after the kits step ``kit_units`` ("for_kits", "assembled", "to_kits" per part) and
    ``cal_use`` (expected use, with the demand of kits assembled from loose seals); from the
    order step on ``ch`` (the chosen candidates in part order), ``parts`` (their parts),
    ``scale`` and ``price`` (exact money units).
    """

    req: PlanRequest
    opt: PlanOptions
    codes: tuple[str, ...]
    index: dict[str, int]
    cal: DemandCalendar
    a0: float
    on_hand: IntArray
    on_order: IntArray
    position: IntArray
    seen: NDArray[np.bool_]
    c: _Cands
    t: _Timing
    lv: _Levels
    targets: FloatArray
    classes: list[str]
    groups: list[str]
    chosen: IntArray = field(default_factory=lambda: np.zeros(0, dtype=np.int64))
    choice_reason: dict[int, str] = field(default_factory=dict)
    pooled: bool = False
    kit_units: dict[str, IntArray] = field(default_factory=dict)
    decisions: list[KitDecision] = field(default_factory=list)
    cal_use: DemandCalendar | None = None
    ch: IntArray = field(default_factory=lambda: np.zeros(0, dtype=np.int64))
    parts: IntArray = field(default_factory=lambda: np.zeros(0, dtype=np.int64))
    scale: int = 1
    price: list[int] = field(default_factory=list)

    @property
    def n(self) -> int:
        return len(self.codes)
