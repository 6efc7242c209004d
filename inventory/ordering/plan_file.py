"""Reading a plan back: the purchase orders of a plan workbook (quantities as a manager
left them) or of the plan's JSON, as draft orders for
:func:`inventory.ordering.orders.create_orders`. Every problem is reported at once, with
its sheet and cell (or its place in the JSON)."""

from __future__ import annotations

import json
from datetime import date, datetime
from decimal import Decimal, InvalidOperation
from pathlib import Path
from typing import Any

from openpyxl import load_workbook

from inventory.core.errors import InventoryError, Problem, Source
from inventory.ordering.model import DraftLine, DraftOrder
from inventory.ordering.workbook import LABELS, PO_COLUMNS, TITLE


def _as_date(v: Any) -> date | None:
    if isinstance(v, datetime):
        return v.date()
    if isinstance(v, date):
        return v
    if isinstance(v, str) and v.strip():
        return date.fromisoformat(v.strip()[:10])
    return None


def read_plan_workbook(path: str | Path) -> list[DraftOrder]:
    """The purchase orders on a plan workbook's ``PO`` sheets, with the quantities as they
    stand (a manager may have edited them; lines set to 0 or left blank are skipped).
    Every problem is reported at once, with its sheet and cell."""
    p = Path(path)
    try:
        wb = load_workbook(p, data_only=False, read_only=True)
    except Exception as exc:
        raise InventoryError(f"{p.name}: cannot read the workbook ({exc})") from None
    reasons: dict[tuple[str, str], str] = {}
    if "Reasons" in wb.sheetnames:
        rows = wb["Reasons"].iter_rows(values_only=True)
        header = list(next(rows, ()))
        if {"Supplier", "Part", "Reason"} <= set(header):
            si, pi, ri = (header.index(h) for h in ("Supplier", "Part", "Reason"))
            for row in rows:
                if row and row[si] and row[pi]:
                    reasons[(str(row[si]), str(row[pi]))] = str(row[ri] or "")
    orders, problems = [], []
    for name in wb.sheetnames:
        ws = wb[name]
        cells = [list(r) for r in ws.iter_rows(values_only=True)]
        if not cells or not cells[0] or cells[0][0] != TITLE:
            continue
        info: dict[str, Any] = {}
        head = None
        for i, row in enumerate(cells):
            if row and row[0] == PO_COLUMNS[0] and len(row) > 1 and row[1] == PO_COLUMNS[1]:
                head = i
                break
            if row and isinstance(row[0], str) and row[0] in LABELS:
                info[row[0]] = row[1] if len(row) > 1 else None
        supplier = str(info.get("Supplier") or "").strip()
        if head is None or not supplier:
            problems.append(Problem("not a purchase-order sheet this tool wrote (no supplier "
                                    "or no line table)", source=Source(p.name, name)))
            continue
        lines = []
        for i in range(head + 1, len(cells)):
            row = cells[i] + [None] * 10
            part = row[1]
            if part is None or str(part).strip() == "":
                break
            qty, cost = row[4], row[7]
            src = Source(p.name, name, i + 1, 5, "Qty")
            if qty is None or qty == "" or qty == 0:
                continue
            if isinstance(qty, bool) or not isinstance(qty, int | float) or qty != int(qty) \
                    or qty < 0:
                problems.append(Problem(f"expected a whole number of units, got {qty!r}",
                                        source=src))
                continue
            try:
                price = None if cost in (None, "") else Decimal(str(cost))
            except InvalidOperation:
                problems.append(Problem(f"expected a unit cost, got {cost!r}",
                                        source=Source(p.name, name, i + 1, 8, "Unit cost")))
                continue
            lines.append(DraftLine(str(part).strip(), int(qty), price,
                                   reasons.get((supplier, str(part).strip()), "")))
        try:
            order_by = _as_date(info.get("Order by"))
            expected = _as_date(info.get("Expected delivery"))
            plan_date = _as_date(info.get("Plan date"))
        except ValueError:
            problems.append(Problem("bad plan, order-by or delivery date",
                                    source=Source(p.name, name)))
            continue
        if lines:
            orders.append(DraftOrder(supplier, order_by, expected, tuple(lines),
                                     f"{p.name}:{name}", plan_date=plan_date))
    wb.close()
    if problems:
        raise InventoryError(problems)
    if not orders and not any(n.startswith("PO ") for n in wb.sheetnames):
        raise InventoryError(f"{p.name}: no purchase-order sheets in this workbook",
                             hint="write one with `inventory plan --xlsx FILE`")
    return orders


def read_plan_json(data: dict[str, Any], name: str = "plan.json") -> list[DraftOrder]:
    """The purchase orders of a ``plan --json`` document."""
    if not isinstance(data, dict) or not isinstance(data.get("orders"), list):
        raise InventoryError(f"{name}: not a plan (no \"orders\" list)",
                             hint="write one with `inventory plan --json > plan.json`")
    out, problems = [], []
    try:
        plan_date = _as_date(data.get("date"))
    except (ValueError, TypeError):
        raise InventoryError(f"{name}: bad plan date {data.get('date')!r}: expected a date "
                             "like 2026-12-02") from None
    for i, o in enumerate(data["orders"]):
        where = f"{name}: orders[{i}]"
        if not isinstance(o, dict) or not o.get("supplier") or not isinstance(o.get("lines"),
                                                                              list):
            problems.append(Problem(f"{where}: needs a supplier and a list of lines"))
            continue
        lines = []
        for j, ln in enumerate(o["lines"]):
            q = ln.get("qty") if isinstance(ln, dict) else None
            if not isinstance(ln, dict) or not ln.get("part") or isinstance(q, bool) \
                    or not isinstance(q, int) or q < 0:
                problems.append(Problem(f"{where}.lines[{j}]: needs a part and a whole qty"))
                continue
            if q == 0:
                continue
            try:
                cost = None if ln.get("unit_cost") in (None, "") else Decimal(str(ln["unit_cost"]))
            except InvalidOperation:
                problems.append(Problem(f"{where}.lines[{j}]: bad unit_cost "
                                        f"{ln.get('unit_cost')!r}"))
                continue
            lines.append(DraftLine(str(ln["part"]), q, cost, str(ln.get("reason") or "")))
        try:
            order_by = _as_date(o.get("order_by"))
            expected = _as_date(o.get("expected_delivery"))
        except ValueError:
            problems.append(Problem(f"{where}: bad order_by or expected_delivery date"))
            continue
        if lines:
            out.append(DraftOrder(str(o["supplier"]), order_by, expected, tuple(lines), where,
                                  plan_date=plan_date))
    if problems:
        raise InventoryError(problems)
    return out


def read_plan_file(path: str | Path) -> list[DraftOrder]:
    """The purchase orders of a plan file: the workbook (``.xlsx``) or its JSON."""

    p = Path(path)
    if not p.exists():
        raise InventoryError(f"no file {p}")
    if p.suffix.lower() in (".xlsx", ".xlsm"):
        return read_plan_workbook(p)
    try:
        data = json.loads(p.read_text(encoding="utf-8"))
    except (UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise InventoryError(f"{p.name}: not JSON ({exc})",
                             hint="give the plan workbook (.xlsx) or `plan --json` output") \
            from None
    return read_plan_json(data, p.name)
