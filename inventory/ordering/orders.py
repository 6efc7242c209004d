"""Purchase orders: record them from a plan, receive against them, list them.

- :func:`create_orders` validates every draft line first (known supplier and part, a supplier
  item for that pair, whole positive quantities, each part once per order) and reports
  every problem at once; then writes all orders in the caller's transaction. Each order
  gets the next reference ``PO-<year>-<nnnn>`` (after any reference of that year already
  used by an order or a booked movement; chosen under a lock, so concurrent recordings
  never take the same reference). A plan is recorded once: its identity (a hash of its date
  and lines, :func:`inventory.ordering.model.drafts_identity`) is kept unique in
  ``recorded_plan``, written before its orders, so recording it again from its JSON or its
  workbook, or from several processes at once, is refused (an edited workbook whose lines
  changed is a new plan). The file's fingerprint is also kept as an import batch.
- :func:`receive_against_order` locks the order and its line (so concurrent deliveries
  against one line queue up and the line's received quantity always equals the sum of the
  receipts booked against it), books the delivery through the ledger with the order's
  reference, supplier and unit cost, adds it to the line's received quantity, closes the
  order when every line is complete (exactly one receipt reports the closing), and refuses
  a delivery that would take a line beyond its quantity plus the over-delivery tolerance.
"""

from __future__ import annotations

import hashlib
import math
import re
from collections.abc import Sequence
from dataclasses import dataclass, replace
from datetime import UTC, date, datetime, timedelta
from decimal import Decimal
from pathlib import Path

from sqlalchemy import func, text, update
from sqlalchemy.dialects.postgresql import insert as pg_insert
from sqlalchemy.dialects.sqlite import insert as sqlite_insert
from sqlmodel import Session, select

from inventory.core import lookup
from inventory.core.db import retry_deadlocks
from inventory.core.errors import InventoryError, Problem
from inventory.core.tables import (
    ImportBatch,
    Movement,
    Part,
    PurchaseOrder,
    PurchaseOrderLine,
    RecordedPlan,
    Supplier,
    SupplierItem,
)
from inventory.ordering.model import DraftOrder, drafts_identity
from inventory.stock import ledger

#: Over-delivery accepted against an order line, as a fraction of its quantity (5 %, common
#: practice); settable per receipt.
DEFAULT_TOLERANCE = 0.05
REF_FORMAT = "PO-{year}-{n:04d}"
_REF = re.compile(r"^PO-(\d{4})-(\d+)$")


def fingerprint(path: str | Path) -> str:
    return hashlib.sha256(Path(path).read_bytes()).hexdigest()


def next_ref(session: Session, year: int) -> str:
    """The next free order reference of ``year``: one past the highest used by an order or
    by a booked movement's reference (history imported from before the tool)."""
    prefix = f"PO-{year}-"
    used = list(session.exec(select(PurchaseOrder.ref).where(PurchaseOrder.ref.like(prefix + "%"))))
    used += [r for r in session.exec(
        select(Movement.reference).where(Movement.reference.like(prefix + "%")).distinct())
        if r]
    top = 0
    for ref in used:
        m = _REF.match(ref)
        if m:
            top = max(top, int(m.group(2)))
    return REF_FORMAT.format(year=year, n=top + 1)


@dataclass(frozen=True, slots=True)
class CreatedOrder:
    ref: str
    supplier: str
    order_by: date | None
    expected: date | None
    lines: int
    total: Decimal

    def to_dict(self) -> dict:
        return {"ref": self.ref, "supplier": self.supplier,
                "order_by": self.order_by.isoformat() if self.order_by else None,
                "expected": self.expected.isoformat() if self.expected else None,
                "lines": self.lines, "total": str(self.total)}


def create_orders(session: Session, drafts: Sequence[DraftOrder], *, created: date,
                  source: str | Path | None = None) -> list[CreatedOrder]:
    """Record ``drafts`` as open purchase orders (see the module docstring)."""
    problems: list[Problem] = []
    fp = None
    if not drafts:
        raise InventoryError("the plan has no order lines to record",
                             hint="nothing to order, or every quantity is 0")
    plan_row = None
    if source is not None or any(d.plan_date is not None for d in drafts):
        plan_row = _claim_plan(session, drafts, source)
    if source is not None:
        fp = fingerprint(source)
        done = session.exec(select(ImportBatch).where(ImportBatch.kind == "plan",
                                                      ImportBatch.fingerprint == fp)).first()
        if done is not None:
            raise InventoryError(
                f"{Path(source).name} was already recorded as purchase orders on "
                f"{done.applied_at:%Y-%m-%d %H:%M}", kind="conflict",
                hint="see `inventory order list`; make a new plan to order again")
    resolved = []
    for d in drafts:
        try:
            sup = lookup.supplier(session, d.supplier)
        except InventoryError as exc:
            problems.append(_with(exc, d.source))
            continue
        items = {pid: si for si, pid in session.exec(
            select(SupplierItem, SupplierItem.part_id).where(SupplierItem.supplier_id == sup.id))}
        seen: set[str] = set()
        lines = []
        for ln in d.lines:
            try:
                part = lookup.part(session, ln.part)
            except InventoryError as exc:
                problems.append(_with(exc, d.source))
                continue
            if part.code in seen:
                problems.append(Problem(f"{d.source}: {part.code} is listed twice for "
                                        f"{sup.code}", kind="conflict"))
                continue
            seen.add(part.code)
            si = items.get(part.id)
            if si is None:
                problems.append(Problem(f"{d.source}: {sup.code} has no supplier item for "
                                        f"{part.code}", kind="unknown",
                                        hint="add it to the price list first"))
                continue
            if ln.qty <= 0:
                problems.append(Problem(f"{d.source}: {part.code} quantity must be more "
                                        f"than 0, got {ln.qty}"))
                continue
            cost = ln.unit_cost if ln.unit_cost is not None else Decimal(str(si.unit_cost))
            if cost < 0:
                problems.append(Problem(f"{d.source}: {part.code} unit cost must be 0 or more"))
                continue
            lines.append((part, ln.qty, cost, ln.reason))
        if lines:
            resolved.append((d, sup, lines))
    if problems:
        raise InventoryError(problems)
    out = []
    _lock(session, ORDER_REF_LOCK, created.year)
    for d, sup, lines in resolved:
        ref = next_ref(session, created.year)
        expected = d.expected or (d.order_by or created) + timedelta(days=sup.lead_time_days)
        po = PurchaseOrder(ref=ref, supplier_id=sup.id, created=created, order_by=d.order_by,
                           expected=expected, status="open")
        session.add(po)
        session.flush()
        total = Decimal("0")
        for part, qty, cost, reason in lines:
            session.add(PurchaseOrderLine(order_id=po.id, part_id=part.id, qty=qty,
                                          unit_cost=cost, reason=reason[:400]))
            total += cost * qty
        session.flush()
        out.append(CreatedOrder(ref, sup.code, d.order_by, expected, len(lines),
                                total.quantize(Decimal("0.01"))))
    if fp is not None:
        session.add(ImportBatch(kind="plan", fingerprint=fp, filename=Path(source).name[:255],
                                rows=sum(o.lines for o in out), applied_at=datetime.now(UTC)))
    if plan_row is not None:
        refs = ", ".join(o.ref for o in out)
        session.execute(update(RecordedPlan).where(RecordedPlan.id == plan_row)
                        .values(orders=refs[:2000]))
    return out


#: First key of the PostgreSQL advisory lock held while choosing order references (the
#: second is the year).
ORDER_REF_LOCK = 72_012


def _lock(session: Session, key: int, sub: int) -> None:
    """A transaction-level lock on PostgreSQL (SQLite's write transactions already hold the
    whole database)."""
    if session.get_bind().dialect.name == "postgresql":
        session.execute(text("SELECT pg_advisory_xact_lock(:k, :s)"), {"k": key, "s": sub})


def _claim_plan(session: Session, drafts: Sequence[DraftOrder],
                source: str | Path | None) -> int:
    """Insert the plan's identity before any of its orders, or refuse: the unique identity
    makes a second recording, concurrent or later, in any form, wait for the first and fail
    here with nothing written."""
    identity = drafts_identity(drafts)
    name = Path(source).name[:255] if source is not None else ""
    dialect = session.get_bind().dialect.name
    ins = pg_insert if dialect == "postgresql" else sqlite_insert
    new_id = session.execute(
        ins(RecordedPlan).values(identity=identity, filename=name, recorded_at=datetime.now(UTC),
                                 orders="")
        .on_conflict_do_nothing(index_elements=["identity"]).returning(RecordedPlan.id)
    ).scalar_one_or_none()
    if new_id is not None:
        return new_id
    done = session.exec(select(RecordedPlan).where(RecordedPlan.identity == identity)).one()
    what = name or "this plan"
    orders = f" ({done.orders})" if done.orders else ""
    came = f" from {done.filename}" if done.filename and done.filename != name else ""
    raise InventoryError(
        f"{what} was already recorded as purchase orders{orders}{came} on "
        f"{done.recorded_at:%Y-%m-%d %H:%M}; plan identity {identity[:12]}", kind="conflict",
        hint="see `inventory order list`; change a quantity or make a new plan to order again")


def _with(exc: InventoryError, where: str) -> Problem:
    p = exc.problems[0]
    msg = f"{where}: {p.message}" if where else p.message
    if exc.hint:
        msg += f" ({exc.hint})"
    return Problem(msg, kind=p.kind)


# -- receiving ----------------------------------------------------------------------------------


@dataclass(frozen=True, slots=True)
class Receipt:
    movement: Movement
    ref: str
    part: str
    ordered: int
    received: int
    status: str

    @property
    def summary(self) -> str:
        line = f"{self.ref}: {self.part} {self.received} of {self.ordered} received"
        return line + ("; order complete, closed" if self.status == "closed" else "")


def find_order(session: Session, ref: str) -> PurchaseOrder:
    po = session.exec(select(PurchaseOrder).where(PurchaseOrder.ref == ref.strip())).first()
    if po is None:
        po = session.exec(select(PurchaseOrder).where(
            PurchaseOrder.ref == ref.strip().upper())).first()
    if po is None:
        hint = lookup.did_you_mean(
            ref, list(session.exec(select(PurchaseOrder.ref))),
            "see `inventory order list`, or omit --order for a delivery without an order")
        raise InventoryError(f"unknown purchase order {ref!r}", kind="unknown", hint=hint)
    return po


@retry_deadlocks
def receive_against_order(session: Session, ref: str, delivery: ledger.Receipt,
                          tolerance: float = DEFAULT_TOLERANCE) -> Receipt:
    """Book ``delivery`` against order ``ref`` (see the module docstring): its unit cost
    defaults to the order line's, its reference and supplier are the order's."""
    part_code, qty, unit_cost = delivery.part, delivery.qty, delivery.unit_cost
    if not (0 <= tolerance < 10):  # also refuses nan
        raise InventoryError(f"tolerance must be a fraction from 0 to 10, got {tolerance}")
    found = find_order(session, ref)
    part = lookup.part(session, part_code)
    # Lock the order, then its line (the same order everywhere), and read their current
    # values: concurrent receipts against one order queue here.
    po = session.exec(select(PurchaseOrder).where(PurchaseOrder.id == found.id)
                      .with_for_update().execution_options(populate_existing=True)).one()
    if po.status != "open":
        raise InventoryError(f"{po.ref} is {po.status}", kind="conflict",
                             hint="receive without --order, or against an open order")
    line = session.exec(select(PurchaseOrderLine).where(
        PurchaseOrderLine.order_id == po.id, PurchaseOrderLine.part_id == part.id)
        .with_for_update().execution_options(populate_existing=True)).first()
    if line is None:
        codes = list(session.exec(select(Part.code).join(
            PurchaseOrderLine, PurchaseOrderLine.part_id == Part.id).where(
            PurchaseOrderLine.order_id == po.id).order_by(Part.code)))
        raise InventoryError(f"{po.ref} has no line for {part.code}", kind="unknown",
                             hint=f"its lines: {', '.join(codes)}")
    if isinstance(qty, bool) or not isinstance(qty, int) or qty <= 0:
        raise InventoryError(f"quantity must be more than 0, got {qty!r}")
    limit = math.floor(line.qty * (1.0 + tolerance) + 1e-9)
    if line.received_qty + qty > limit:
        raise InventoryError(
            f"{po.ref} {part.code}: ordered {line.qty}, received {line.received_qty}; "
            f"{qty} more would make {line.received_qty + qty}, beyond the "
            f"{tolerance:.0%} over-delivery tolerance ({limit})", kind="conflict",
            hint="book the surplus without --order, or raise --tolerance")
    sup = session.get(Supplier, po.supplier_id)
    mv = ledger.receive(session, replace(
        delivery, part=part.code, unit_cost=unit_cost if unit_cost is not None else line.unit_cost,
        reference=po.ref, supplier=sup.code if sup else None))
    pol = PurchaseOrderLine.__table__.c
    received = session.execute(
        update(PurchaseOrderLine).where(pol.id == line.id)
        .values(received_qty=pol.received_qty + qty).returning(pol.received_qty)).scalar_one()
    left = session.exec(select(func.count()).select_from(PurchaseOrderLine).where(
        PurchaseOrderLine.order_id == po.id,
        PurchaseOrderLine.received_qty < PurchaseOrderLine.qty)).one()
    status = po.status
    if left == 0:
        closed = session.execute(
            update(PurchaseOrder).where(PurchaseOrder.id == po.id, PurchaseOrder.status == "open")
            .values(status="closed"))
        if closed.rowcount == 1:
            status = "closed"
    return Receipt(mv, po.ref, part.code, line.qty, received, status)


# -- listing --------------------------------------------------------------------------------------


@dataclass(frozen=True, slots=True)
class OrderSummary:
    ref: str
    supplier: str
    created: date
    order_by: date | None
    expected: date | None
    status: str
    lines: int
    ordered: int
    received: int
    total: Decimal

    def to_dict(self) -> dict:
        return {"ref": self.ref, "supplier": self.supplier, "created": self.created.isoformat(),
                "order_by": self.order_by.isoformat() if self.order_by else None,
                "expected": self.expected.isoformat() if self.expected else None,
                "status": self.status, "lines": self.lines, "ordered": self.ordered,
                "received": self.received, "total": str(self.total)}


STATUSES = ("open", "closed", "cancelled")


def list_orders(session: Session, *, status: str | None = "open") -> list[OrderSummary]:
    """Purchase orders (one status, or all with ``None``), newest first, summed in SQL."""
    if status is not None and status not in STATUSES:
        raise InventoryError(f"unknown status {status!r}",
                             hint=f"use {', '.join(STATUSES)} or all")
    q = (
        select(PurchaseOrder.ref, Supplier.code, PurchaseOrder.created, PurchaseOrder.order_by,
               PurchaseOrder.expected, PurchaseOrder.status, func.count(PurchaseOrderLine.id),
               func.coalesce(func.sum(PurchaseOrderLine.qty), 0),
               func.coalesce(func.sum(PurchaseOrderLine.received_qty), 0),
               func.coalesce(func.sum(PurchaseOrderLine.qty * PurchaseOrderLine.unit_cost), 0))
        .join(Supplier, Supplier.id == PurchaseOrder.supplier_id)
        .join(PurchaseOrderLine, PurchaseOrderLine.order_id == PurchaseOrder.id, isouter=True)
        .group_by(PurchaseOrder.id, PurchaseOrder.ref, Supplier.code, PurchaseOrder.created,
                  PurchaseOrder.order_by, PurchaseOrder.expected, PurchaseOrder.status)
        .order_by(PurchaseOrder.created.desc(), PurchaseOrder.ref.desc())
    )
    if status is not None:
        q = q.where(PurchaseOrder.status == status)
    return [OrderSummary(ref, sup, created, order_by, expected, st, int(n), int(o), int(r),
                         Decimal(str(v)).quantize(Decimal("0.01")))
            for ref, sup, created, order_by, expected, st, n, o, r, v in session.exec(q)]
