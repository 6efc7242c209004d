"""The order-planning use case: read the store, forecast, plan, and return plain records.

:func:`make_plan` reads parts, suppliers, supplier items, usable stock (lots past their
ISO 2230 storage period are not counted), quantities still due on open purchase orders and
the kits' bills of materials, asks a :class:`ForecastSource` for the demand, and calls the
pure planner (:func:`inventory.ordering.plan.plan_orders`). :func:`plan_to_dict` gives the
JSON contract; :mod:`inventory.ordering.workbook` the workbook; the demo's pre-season plan is
:func:`inventory.demo.tour.plan_tour`.

What the planner reads from the store, the forecast protocol and :class:`PlanSpec` (what a
caller asks for) are in :mod:`inventory.ordering.plan_inputs`.
"""

from __future__ import annotations

import statistics
from collections import defaultdict
from collections.abc import Mapping, Sequence
from dataclasses import replace
from datetime import date
from decimal import Decimal
from pathlib import Path
from typing import Any

from sqlmodel import Session, select

from inventory.core import lookup
from inventory.core.errors import InventoryError
from inventory.core.tables import (
    Part,
    PurchaseOrderLine,
    Supplier,
)
from inventory.ordering.model import Plan, PlanOptions
from inventory.ordering.plan import PlanningError, plan_orders
from inventory.ordering.plan_inputs import (  # noqa: F401 (the planner's inputs, for callers)
    DEFAULT_FORECAST,
    ForecastSource,
    PlanSpec,
    cure_ages,
    history_forecast,
    on_order,
    outlook_forecast,
    plan_request,
)
from inventory.ordering.simulate import BacktestSetup

# -- the use case ----------------------------------------------------------------------------------


def _cover_months(session: Session, as_of: date, season_start: date | None) -> float:
    """A typical cover for the distribution's dispersion: lead time + order cycle of the
    median supplier, or from now to the season start plus a month."""
    if season_start is not None:
        return max((season_start - as_of).days / 30.4375 + 1.0, 1.0)
    covers = [float(s.lead_time_days + s.order_cycle_days) / 30.4375
              for s in session.exec(select(Supplier))]
    return max(statistics.median(covers), 1.0) if covers else 2.0


def make_plan(session: Session, spec: PlanSpec) -> Plan:
    """The replenishment plan as of ``spec.as_of`` (see :mod:`inventory.ordering.plan`).

    Raises :class:`InventoryError` (one line each) for a season start not after the plan
    date, a negative budget or one below every supplier's minimum order, a fill rate outside
    0..1, and unknown parts or suppliers.
    """
    as_of, season_start, budget = spec.as_of, spec.season_start, spec.budget
    if season_start is not None and season_start <= as_of:
        raise InventoryError(
            f"season start {season_start.isoformat()} is not after the plan date "
            f"{as_of.isoformat()}", hint="give a season start in the future")
    if budget is not None and budget < 0:
        raise InventoryError(f"budget must be 0 or more, got {budget}")
    targets = {}
    for code, t in (spec.part_targets or {}).items():
        targets[lookup.part(session, code).code] = float(t)
    opt = replace(spec.options or PlanOptions(), season_start=season_start, budget=budget,
                  fill_rate=spec.fill_rate, part_targets=targets)
    req = plan_request(session, as_of, forecast=spec.forecast,
                       cover_months=_cover_months(session, as_of, season_start),
                       horizon_months=opt.horizon_months, parts=spec.parts,
                       suppliers=spec.suppliers)
    try:
        return plan_orders(req, opt)
    except PlanningError as exc:
        raise InventoryError(str(exc)) from None


# -- JSON ------------------------------------------------------------------------------------------


def plan_to_dict(plan: Plan) -> dict[str, Any]:
    """The ``plan --json`` contract: ``orders`` (supplier, order_by, total, lines with part,
    qty and its unit, packs, unit_cost, reason), ``service`` (target, expected_fill) and ``budget`` (limit,
    spent); plus the plan date, season start, every line's structured reasoning, what could
    not be covered and the kit decisions."""
    return {
        "date": plan.as_of.isoformat(),
        "identity": plan.identity,
        "season_start": plan.season_start.isoformat() if plan.season_start else None,
        "orders": [
            {
                "supplier": o.supplier,
                "name": o.name,
                "currency": o.currency,
                "order_by": o.order_by.isoformat(),
                "expected_delivery": o.arrival.isoformat(),
                "total": str(o.total),
                "min_order_value": str(o.min_order_value),
                "note": o.note,
                "lines": [
                    {"part": ln.part, "qty": ln.qty, "unit": ln.unit, "packs": ln.packs,
                     "pack_size": ln.pack_size, "unit_cost": str(ln.unit_cost),
                     "value": str(ln.value), "supplier_code": ln.supplier_code,
                     "reason": ln.reason, "caps": list(ln.caps)}
                    for ln in o.lines
                ],
            }
            for o in plan.orders
        ],
        "service": {"target": round(plan.service_target, 4),
                    "expected_fill": round(plan.expected_fill, 4),
                    "expected_fill_without_budget": round(plan.fill_before_budget, 4)},
        "budget": {"limit": None if plan.budget_limit is None else str(plan.budget_limit),
                   "spent": str(plan.budget_spent)},
        "not_covered": [{"part": u.part, "supplier": u.supplier, "units": u.need,
                         "reason": u.reason} for u in plan.uncovered],
        "kits": [{"kit": k.kit, "need": k.need, "how": k.how,
                  "cost_whole": None if k.cost_whole is None else str(k.cost_whole),
                  "cost_loose": None if k.cost_loose is None else str(k.cost_loose),
                  "from_stock": k.from_stock, "from_loose": k.from_loose,
                  "reason": k.reason} for k in plan.kits],
        "lines": [ln.to_dict() for ln in plan.lines],
    }


def reorder_source(template: PlanSpec | None = None):
    """The month-end report's reorder list from this planner: per part, the level the plan
    keeps stock up to (its reorder point under periodic review) and the quantity it orders.
    ``template`` (budget, fill rate, ...) is planned as of the report's day."""
    import math

    from inventory.ordering.model import ReorderAdvice

    def source(session: Session, as_of: date) -> dict:
        try:
            spec = replace(template, as_of=as_of) if template else PlanSpec(as_of)
            plan = make_plan(session, spec)
        except InventoryError:
            return {}  # nothing the planner can plan yet: the report's usage rule applies
        return {
            ln.part: ReorderAdvice(ln.part, int(math.ceil(ln.level)), ln.qty,
                                   f"plan ({ln.policy}, fill target {ln.fill_target:.0%})")
            for ln in plan.lines
        }

    return source


# -- for the faces ---------------------------------------------------------------------------------


def receive_order(session: Session, ref: str, part: str, qty: int, *,
                  unit_cost: Decimal | None = None, cured: str | None = None,
                  location: str = "MAIN") -> str:
    """Book a delivery against open purchase order ``ref`` (the web form's fields; see
    :func:`receive_against`); returns its one-line summary."""
    from inventory.stock.bookings import Receipt

    return receive_against(session, ref, Receipt(part, qty, unit_cost, cured=cured,
                                                 location=location)).summary


def receive_against(session: Session, ref: str, receipt: Any, tolerance: float | None = None):
    """Book ``receipt`` (a :class:`inventory.stock.service.Receipt`) against open purchase
    order ``ref``, over-delivery allowed up to ``tolerance`` (the order's default when None):
    the result has the ``movement`` and a one-line ``summary``."""
    from inventory.ordering.orders import receive_against_order

    if tolerance is None:
        return receive_against_order(session, ref, receipt)
    return receive_against_order(session, ref, receipt, tolerance)


def short_reason(line: Any) -> str:
    """Why a plan line orders what it orders, in a few words (the command line's table)."""
    from inventory.ordering.text import short_reason as reason

    return reason(line)


def unit_suffix(unit: str) -> str:
    """" ml" after a quantity counted in millilitres; nothing for whole parts."""
    from inventory.ordering.text import unit_suffix as suffix

    return suffix(unit)


def write_plan_workbook(plan: Plan, path: Any) -> Path:
    """The plan as a workbook at ``path`` (see :mod:`inventory.ordering.workbook`)."""
    from inventory.ordering.workbook import write_plan_workbook as write

    return write(plan, path)


def open_orders(session: Session) -> list:
    from inventory.ordering.orders import list_orders

    return list_orders(session, status="open")


def order_detail(session: Session, ref: str) -> dict[str, Any]:
    """One purchase order as plain data: its header (reference, supplier, status, created,
    order-by and expected dates, total) and its lines (part, qty, unit cost, line total,
    received so far), in part-code order. Unknown ``ref``: :class:`InventoryError`."""
    from inventory.ordering.orders import find_order

    po = find_order(session, ref)
    supplier = session.get(Supplier, po.supplier_id)
    rows = session.exec(
        select(Part.code, PurchaseOrderLine.qty, PurchaseOrderLine.unit_cost,
               PurchaseOrderLine.received_qty)
        .join(Part, Part.id == PurchaseOrderLine.part_id)
        .where(PurchaseOrderLine.order_id == po.id)
        .order_by(Part.code)).all()
    cent = Decimal("0.01")
    lines = [{"part": code, "qty": int(qty), "unit_cost": Decimal(str(cost)),
              "line_total": (int(qty) * Decimal(str(cost))).quantize(cent),
              "received": int(received)} for code, qty, cost, received in rows]
    return {"ref": po.ref, "supplier": supplier.code if supplier else "",
            "supplier_name": supplier.name if supplier else "", "status": po.status,
            "created": po.created, "order_by": po.order_by, "expected": po.expected,
            "total": sum((ln["line_total"] for ln in lines), Decimal("0")).quantize(cent),
            "lines": lines}


def write_order_file(session: Session, ref: str, path: Any) -> dict[str, Any]:
    """Write purchase order ``ref`` as a workbook at ``path`` (an "order" sheet with the
    header, a "lines" sheet with the lines); returns the :func:`order_detail` written."""
    from inventory.ordering.workbook import write_order_workbook

    detail = order_detail(session, ref)
    write_order_workbook(detail, path)
    return detail


def record_orders(session: Session, lines: Sequence[tuple[str, str, int, Decimal | None, str]],
                  *, created: date, dates: Mapping[str, tuple[date | None, date | None]]
                  | None = None) -> list:
    """Record purchase orders from plan lines ``(supplier, part, qty, unit_cost, reason)``
    as reviewed in a page (quantities edited; lines at 0 dropped); ``dates`` gives each
    supplier's order-by and expected dates. One order per supplier."""
    from inventory.ordering.model import DraftLine, DraftOrder
    from inventory.ordering.orders import create_orders

    by_supplier: dict[str, list[DraftLine]] = defaultdict(list)
    for supplier, part, qty, cost, reason in lines:
        if qty < 0:
            raise InventoryError(f"quantity of {part} must be 0 or more, got {qty}")
        if qty:
            by_supplier[supplier].append(DraftLine(part, qty, cost, reason))
    drafts = [DraftOrder(sup, *(dates or {}).get(sup, (None, None)), tuple(ls),
                         source=f"plan page, {sup}") for sup, ls in by_supplier.items()]
    return create_orders(session, drafts, created=created)


# -- for the command line --------------------------------------------------------------------------


def plan_command(session: Session, spec: PlanSpec, *, kit_mode: str | None = None,
                 line_cost: Decimal | None = None, xlsx: Any = None) -> Plan:
    """``inventory plan``: :func:`make_plan` with the kit mode and the line-order cost set
    on ``spec``'s :class:`PlanOptions` (default ones); writes the plan workbook to ``xlsx``
    when given."""
    opts = spec.options or PlanOptions()
    if kit_mode is not None:
        opts = replace(opts, kit_mode=kit_mode)
    if line_cost is not None:
        opts = replace(opts, line_order_cost=line_cost)
    plan = make_plan(session, replace(spec, options=opts))
    if xlsx is not None:
        from inventory.ordering.workbook import write_plan_workbook

        write_plan_workbook(plan, xlsx)
    return plan


def orders_from_plan_file(session: Session, path: Any, *, created: date) -> list:
    """``inventory order create --from-plan``: read a plan workbook or its JSON and record
    its purchase orders as open orders."""
    from inventory.ordering.orders import create_orders
    from inventory.ordering.plan_file import read_plan_file

    return create_orders(session, read_plan_file(path), created=created, source=path)


def list_orders(session: Session, status: str | None = "open") -> list:
    """Purchase orders with what is received so far (``status`` None: all)."""
    from inventory.ordering.orders import list_orders as rows

    return rows(session, status=status)


def _read_demand_file(path: Path) -> Any:
    from inventory.core.errors import Problem
    from inventory.ordering.backtest import DemandFileError, read_demand_csv

    if not path.exists():
        raise InventoryError(f"no file {path}", kind="unknown",
                             hint="give a wide CSV (month + one column per part) or a long "
                                  "one (date, part, qty)")
    if path.is_dir():
        raise InventoryError(f"{path} is a folder, not a CSV file")
    try:
        return read_demand_csv(path)
    except DemandFileError as exc:
        raise InventoryError([Problem(line) for line in str(exc).splitlines()]) from None
    except UnicodeDecodeError:
        raise InventoryError(f"{path}: not a UTF-8 text file") from None


def backtest_file(file: Any, setup: BacktestSetup = BacktestSetup(), *,
                  fill_rate: float = 0.95, rolling: bool = False, origins: int = 3
                  ) -> dict[str, Any]:
    """``inventory backtest``: forecast + order-up-to policy on a demand history outside the
    database (wide or long CSV), one origin or ``origins`` rolling ones; ``setup``: horizon,
    lead time, review period, allocation (:class:`BacktestSetup`). Returns the result as
    the ``--json`` document (with the file, the allocation and the wall seconds)."""
    import time as clock

    from inventory.ordering import backtest as bt

    file = Path(file)
    horizon, allocation = setup.horizon, setup.allocation
    if horizon < 1 or setup.lead_time < 0 or setup.review_period < 1:
        raise InventoryError("--horizon and --review must be 1 or more, --lead-time 0 or more")
    table = _read_demand_file(file)
    _, t_len = table.values.shape
    if t_len <= horizon + 2:
        raise InventoryError(f"{file}: {t_len} periods is too short for --horizon {horizon}: "
                             f"need more than {horizon + 2}", hint="use a shorter --horizon")
    t0 = clock.perf_counter()
    try:
        if rolling:
            res = bt.run_rolling_backtest(table.values, table.names, fill_rate=fill_rate,
                                          origins=origins, setup=setup,
                                          season_pos=table.season_pos())
        else:
            res = bt.run_backtest(table.values, table.names, fill_rate=fill_rate, setup=setup,
                                  season_pos=table.season_pos())
    except ValueError as exc:
        raise InventoryError(f"{file}: {exc}", hint="use a shorter --horizon or fewer "
                                                    "--origins") from None
    data = res.to_dict()
    data.update(file=str(file), allocation=allocation, rolling=rolling,
                wall_seconds=round(clock.perf_counter() - t0, 3))
    return data
