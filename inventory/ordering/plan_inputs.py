"""What the order planner reads from the store: the demand forecast (behind the
:class:`ForecastSource` protocol), suppliers and their items, the age of their rubber on
arrival, usable stock and what is still due on open orders; and :class:`PlanSpec`, what a
caller asks of :func:`inventory.ordering.service.make_plan`.

The forecast is behind a small protocol so the planner does not depend on how it is made:
:func:`history_forecast` (monthly issues per stock item, :func:`inventory.forecast.methods.
fit_forecast` and :func:`~inventory.forecast.methods.fit_distribution`) is light;
:func:`outlook_forecast` (the default) adapts the shared forecast use case
(:func:`inventory.forecast.service.demand_outlook`: job-count season, installed base).
"""

from __future__ import annotations

import statistics
from collections import defaultdict
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from datetime import UTC, date, datetime, time, timedelta
from decimal import Decimal
from typing import Protocol

import numpy as np
from sqlalchemy import func
from sqlmodel import Session, select

from inventory.bench.seals import storage_limit
from inventory.core import lookup
from inventory.core.cure import quarter_end
from inventory.core.tables import (
    Lot,
    Movement,
    Part,
    PurchaseOrder,
    PurchaseOrderLine,
    Supplier,
    SupplierItem,
)
from inventory.forecast import methods as fc
from inventory.forecast.demand import mask_before_start
from inventory.forecast.distributions import negative_binomial
from inventory.forecast.queries import item_demand, kit_specs
from inventory.ordering.model import (
    DemandForecast,
    PartStock,
    PlanOptions,
    PlanRequest,
    SupplierTerms,
    SupplyOption,
)

# -- the forecast protocol ----------------------------------------------------------------------


class ForecastSource(Protocol):
    """Demand for every stock item as the planner needs it: codes, expected demand per
    calendar month from ``as_of``'s month for ``horizon_months`` months, and the per-month
    demand distribution over a cover of ``cover_months`` (its dispersion is used)."""

    def __call__(self, session: Session, as_of: date, *, cover_months: float,
                 horizon_months: int) -> DemandForecast: ...


def _history_end(as_of: date) -> date:
    """Last day of the last complete month before ``as_of``."""
    return as_of.replace(day=1) - timedelta(days=1)


def history_forecast(session: Session, as_of: date, *, cover_months: float = 2.0,
                     horizon_months: int = 132, options: fc.FitOptions | None = None
                     ) -> DemandForecast:
    """Forecast from the monthly issues of every stock item (kits as kits), fitted with the
    domain forecaster (its own choices: methods per class, the pooled season only where
    the backtest wants it). Light and dependency-free: the benchmark's path."""
    hist = item_demand(session, until=_history_end(as_of))
    month0 = as_of.replace(day=1)
    n = len(hist.codes)
    if hist.values.shape[1] == 0 or n == 0:
        zero = np.zeros((n, max(horizon_months, 1)))
        return DemandForecast(tuple(hist.codes), month0, zero, negative_binomial(np.zeros(n), 1.0),
                              np.zeros(n, dtype=bool))
    y = mask_before_start(hist.values, hist.start)
    pos = (hist.months.astype(np.int64) % 12).astype(np.int64)
    opt = options or fc.FitOptions()
    res = fc.fit_forecast(y, season_pos=pos, options=opt)
    dist = fc.fit_distribution(y, res, cover=max(cover_months, 1.0)).dist
    gap = int((np.datetime64(month0, "M") - (hist.months[-1] + 1)).astype(int))
    means = res.mean(gap + horizon_months)[:, gap:]
    seen = (np.nan_to_num(y) > 0).any(axis=1)
    return DemandForecast(tuple(hist.codes), month0, means, dist, seen)


def outlook_forecast(session: Session, as_of: date, *, cover_months: float = 2.0,
                     horizon_months: int = 132, outlook_months: int = 36) -> DemandForecast:
    """The shared forecast (:func:`inventory.forecast.service.demand_outlook`, every stock
    item as it leaves the shelf) as a :class:`ForecastSource`. At most ``outlook_months``
    are forecast; the planner repeats the last year beyond them (shelf-life caps look years
    ahead, where the installed-base signal says nothing new)."""
    from inventory.forecast.service import ForecastRequest, demand_outlook

    out = demand_outlook(session, ForecastRequest(
        today=as_of, horizon=min(horizon_months, outlook_months), by="item",
        lead_time_months=max(cover_months - 1.0, 0.0),
        review_months=min(max(cover_months, 0.1), 1.0)))
    month0 = np.datetime64(out.periods[0], "D").item()
    seen = (np.nan_to_num(out.history) > 0).any(axis=1)
    return DemandForecast(tuple(out.codes), month0, out.mean, out.dist, seen)


#: The forecast :func:`make_plan` uses unless told otherwise: the shared forecast use case
#: (season from pooled job counts, installed base), which sees the spring peak.
DEFAULT_FORECAST: ForecastSource = outlook_forecast


# -- reading the store -----------------------------------------------------------------------------


def _suppliers(session: Session) -> dict[str, SupplierTerms]:
    return {
        s.code: SupplierTerms(s.code, s.name, float(s.lead_time_days), float(s.lead_time_sd_days),
                              Decimal(str(s.min_order_value)), float(s.order_cycle_days),
                              s.currency)
        for s in session.exec(select(Supplier))
    }


def cure_ages(session: Session) -> dict[str, float]:
    """Median age (days from the end of the cure quarter to receipt) of the lots each
    supplier delivered: how old its rubber usually is on arrival."""
    rows = session.exec(
        select(Supplier.code, Lot.cured, Lot.received)
        .join(Supplier, Supplier.id == Lot.supplier_id)
        .where(Lot.cured.is_not(None))
    )
    ages: dict[str, list[float]] = defaultdict(list)
    for code, cured, received in rows:
        try:
            ages[code].append(float((received - quarter_end(cured)).days))
        except (ValueError, TypeError, IndexError):
            continue
    return {k: max(statistics.median(v), 0.0) for k, v in ages.items() if v}


def _options(session: Session) -> list[SupplyOption]:
    ages = cure_ages(session)
    rows = session.exec(
        select(SupplierItem, Supplier.code, Part.code)
        .join(Supplier, Supplier.id == SupplierItem.supplier_id)
        .join(Part, Part.id == SupplierItem.part_id)
        .order_by(Part.code, SupplierItem.id)
    )
    return [
        SupplyOption(pcode, scode, Decimal(str(si.unit_cost)), int(si.pack_size),
                     int(si.min_order_qty),
                     None if si.lead_time_days is None else float(si.lead_time_days),
                     si.supplier_code or "", ages.get(scode))
        for si, scode, pcode in rows
    ]


def on_order(session: Session, as_of: date) -> dict[str, int]:
    """Units still due per part on open purchase orders created on or before ``as_of``."""
    q = (
        select(Part.code, func.sum(PurchaseOrderLine.qty - PurchaseOrderLine.received_qty))
        .join(PurchaseOrder, PurchaseOrder.id == PurchaseOrderLine.order_id)
        .join(Part, Part.id == PurchaseOrderLine.part_id)
        .where(PurchaseOrder.status == "open", PurchaseOrder.created <= as_of)
        .group_by(Part.code)
    )
    return {code: int(n) for code, n in session.exec(q) if n and n > 0}


def _stock(session: Session, as_of: date) -> dict[str, PartStock]:
    """On hand per part at the end of ``as_of`` from the ledger, split into usable units and
    units in lots past their ISO 2230 storage period (or past an inspected extension)."""
    end = datetime.combine(as_of + timedelta(days=1), time(0), tzinfo=UTC)
    parts = {p.id: p for p in session.exec(select(Part))}
    held: dict[int, list[int]] = {pid: [0, 0] for pid in parts}
    q = (
        select(Movement.part_id, Lot.cured, Lot.extended_until, func.sum(Movement.qty))
        .join(Lot, Lot.id == Movement.lot_id)
        .where(Movement.ts < end)
        .group_by(Movement.part_id, Movement.lot_id, Lot.cured, Lot.extended_until)
    )
    for pid, cured, extended, qty in session.exec(q):
        qty = int(qty or 0)
        if qty <= 0 or pid not in held:
            continue
        limit = extended
        if limit is None and cured and parts[pid].material:
            try:
                limit = storage_limit(cured, parts[pid].material)
            except ValueError:
                limit = None
        held[pid][1 if limit is not None and limit < as_of else 0] += qty
    due = on_order(session, as_of)
    return {
        p.code: PartStock(p.code, p.kind, p.description, p.material, held[pid][0], held[pid][1],
                          due.get(p.code, 0), p.unit or "each")
        for pid, p in parts.items()
    }


def plan_request(session: Session, as_of: date, *, forecast: ForecastSource | None = None,
                 cover_months: float = 2.0, horizon_months: int = 132,
                 parts: Sequence[str] = (), suppliers: Sequence[str] = ()) -> PlanRequest:
    """Everything the planner needs from the store, optionally only some parts or
    suppliers (unknown codes raise :class:`InventoryError` with the closest codes)."""
    wanted_parts = {lookup.part(session, p).code for p in parts}
    wanted_sups = {lookup.supplier(session, s).code for s in suppliers}
    source = forecast or DEFAULT_FORECAST
    fcst = source(session, as_of, cover_months=cover_months, horizon_months=horizon_months)
    options = _options(session)
    kits = kit_specs(session)
    if wanted_sups:
        options = [o for o in options if o.supplier in wanted_sups]
        fcst = _restrict(fcst, {o.part for o in options} | set(wanted_parts or ()))
    if wanted_parts:
        fcst = _restrict(fcst, wanted_parts)
    if wanted_parts or wanted_sups:
        keep = set(fcst.codes)
        kits = [k for k in kits if k.code in keep]
    return PlanRequest(as_of, fcst, _stock(session, as_of), options, _suppliers(session), kits)


def _restrict(f: DemandForecast, codes: set[str]) -> DemandForecast:
    idx = np.array([i for i, c in enumerate(f.codes) if c in codes], dtype=np.int64)
    return DemandForecast(tuple(f.codes[i] for i in idx), f.month0, f.monthly_mean[idx],
                          f.dist.take(idx), None if f.seen is None else f.seen[idx])


@dataclass(frozen=True, slots=True)
class PlanSpec:
    """A plan as of ``as_of``: optional season start, budget, fill rate and per-part fill
    targets, only some parts or suppliers, the planner's options and the forecast to use
    (default :data:`DEFAULT_FORECAST`)."""

    as_of: date
    season_start: date | None = None
    budget: Decimal | None = None
    fill_rate: float | None = None
    part_targets: Mapping[str, float] | None = None
    parts: Sequence[str] = ()
    suppliers: Sequence[str] = ()
    options: PlanOptions | None = None
    forecast: ForecastSource | None = None
