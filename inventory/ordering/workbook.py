"""The plan as a workbook a manager can send and defend (read back by
:mod:`inventory.ordering.plan_file`).

Sheets:

- ``Summary``: plan date, season start, service target and expected fill, budget, and one
  row per purchase order (supplier, order-by date, expected delivery, lines, total, note).
- ``PO <SUPPLIER>``: one per supplier, laid out as a purchase order: a header block
  (supplier, order reference, order-by date, expected delivery, currency, minimum order)
  and the lines (part, supplier's code, description, quantity, pack size, packs, unit cost,
  line total as a formula, a short note), with a total. Quantities may be edited before
  the order is recorded: :func:`read_plan_workbook` reads them back.
- ``Reasons``: every line of the plan (ordered or not) with each figure of its reasoning and
  the sentence; ``Not covered``: what the plan could not cover and why; ``Kits``: how each
  kit's need is covered.

Text cells go through the sheets writer's formula guard; the only formulas are the line
totals and order totals this module writes itself.
"""

from __future__ import annotations

from datetime import date
from decimal import Decimal
from pathlib import Path
from typing import Any

from openpyxl import Workbook
from openpyxl.styles import Alignment, Border, Font, PatternFill, Side
from openpyxl.utils import get_column_letter

from inventory.ordering.model import Plan, SupplierOrder
from inventory.sheets.write import SheetSpec, fill_sheet, save_workbook, xml_text

TITLE = "Purchase order"
HEADER_FILL = PatternFill("solid", fgColor="DDE4EE")
LABEL_FONT = Font(bold=True, color="44546A")
THIN = Side(style="thin", color="8EA0B8")
PO_COLUMNS = ("Line", "Part", "Supplier code", "Description", "Qty", "Pack size", "Packs",
              "Unit cost", "Line total", "Note")
LABELS = ("Supplier", "Supplier name", "Order reference", "Plan date", "Order by",
          "Expected delivery", "Currency", "Minimum order value")
MONEY = "#,##0.00"
PRICE = "#,##0.0000"
_NOTES = {"shelf_life": "shelf-life cap", "min_forced": "minimum above shelf-life cap",
          "top_up": "topped up to minimum order", "budget": "cut for budget",
          "late": "late"}


def _text(ws, row: int, col: int, value: Any):
    cell = ws.cell(row=row, column=col)
    if isinstance(value, str):
        cell.value = xml_text(value)
        cell.data_type = "s"
        if value.startswith(("=", "+", "-", "@")):
            cell.quotePrefix = True
    else:
        cell.value = float(value) if isinstance(value, Decimal) else value
    return cell


def _printable(ws) -> None:
    """Landscape, one page wide: a purchase order prints as one sheet of paper across."""
    ws.page_setup.orientation = "landscape"
    ws.page_setup.fitToWidth = 1
    ws.page_setup.fitToHeight = 0
    ws.sheet_properties.pageSetUpPr.fitToPage = True


def _po_sheet(wb: Workbook, plan: Plan, order: SupplierOrder) -> None:
    ws = wb.create_sheet(f"PO {order.supplier}"[:31])
    _printable(ws)
    _text(ws, 1, 1, TITLE).font = Font(bold=True, size=14)
    values = (order.supplier, order.name, "", plan.as_of, order.order_by, order.arrival,
              order.currency, order.min_order_value)
    for i, (label, value) in enumerate(zip(LABELS, values, strict=True), start=3):
        _text(ws, i, 1, label).font = LABEL_FONT
        cell = _text(ws, i, 2, value)
        cell.alignment = Alignment(horizontal="left")
        if isinstance(value, date):
            cell.number_format = "yyyy-mm-dd"
        elif isinstance(value, Decimal):
            cell.number_format = MONEY
    _text(ws, 5, 3, "(given by `inventory order create`)").font = Font(italic=True,
                                                                       color="808080")
    head = 3 + len(LABELS) + 1
    for j, h in enumerate(PO_COLUMNS, start=1):
        c = _text(ws, head, j, h)
        c.font = Font(bold=True)
        c.fill = HEADER_FILL
        c.border = Border(bottom=THIN)
    first = head + 1
    for n, ln in enumerate(order.lines, start=1):
        r = head + n
        note = ", ".join(_NOTES[c] for c in ln.caps if c in _NOTES)
        for j, v in enumerate((n, ln.part, ln.supplier_code, ln.description, ln.qty,
                               ln.pack_size, ln.packs, ln.unit_cost), start=1):
            _text(ws, r, j, v)
        ws.cell(row=r, column=1).alignment = Alignment(horizontal="left")
        ws.cell(row=r, column=8).number_format = PRICE
        total = ws.cell(row=r, column=9, value=f"=E{r}*H{r}")
        total.number_format = MONEY
        _text(ws, r, 10, note)
    last = head + max(len(order.lines), 1)
    tr = last + 1
    _text(ws, tr, 8, "Total").font = Font(bold=True)
    tot = ws.cell(row=tr, column=9, value=f"=SUM(I{first}:I{last})")
    tot.font = Font(bold=True)
    tot.number_format = MONEY
    tot.border = Border(top=THIN)
    if order.note:
        _text(ws, tr + 2, 1, f"Note: {order.note}").font = Font(italic=True)
    _text(ws, tr + 3, 1, "The reasoning behind every line is on the Reasons sheet.").font = \
        Font(italic=True, color="808080")
    widths = (6, 22, 14, 38, 8, 10, 8, 12, 13, 34)
    for j, w in enumerate(widths, start=1):
        ws.column_dimensions[get_column_letter(j)].width = w
    ws.column_dimensions["A"].width = 20
    ws.freeze_panes = ws.cell(row=head + 1, column=1)


def _summary(wb: Workbook, plan: Plan) -> None:
    ws = wb.create_sheet("Summary", 0)
    _printable(ws)
    _text(ws, 1, 1, "Replenishment plan").font = Font(bold=True, size=14)
    facts = [
        ("Plan date", plan.as_of),
        ("Season start", plan.season_start or "(regular review)"),
        ("Service target (fill)", plan.service_target),
        ("Expected fill", plan.expected_fill),
        ("Budget", plan.budget_limit if plan.budget_limit is not None else "(none)"),
        ("Spent", plan.budget_spent),
        ("Expected fill without the budget", plan.fill_before_budget),
        ("Plan identity", plan.identity),
    ]
    for i, (label, value) in enumerate(facts, start=3):
        _text(ws, i, 1, label).font = LABEL_FONT
        cell = _text(ws, i, 2, value)
        if isinstance(value, float):
            cell.number_format = "0.0%"
        elif isinstance(value, Decimal):
            cell.number_format = MONEY
        elif isinstance(value, date):
            cell.number_format = "yyyy-mm-dd"
    head = 3 + len(facts) + 1
    cols = ("Supplier", "Name", "Order by", "Expected delivery", "Lines", "Total", "Currency",
            "Minimum order", "Note")
    for j, h in enumerate(cols, start=1):
        c = _text(ws, head, j, h)
        c.font = Font(bold=True)
        c.fill = HEADER_FILL
    for i, o in enumerate(plan.orders, start=head + 1):
        for j, v in enumerate((o.supplier, o.name, o.order_by, o.arrival, len(o.lines),
                               o.total, o.currency, o.min_order_value, o.note), start=1):
            cell = _text(ws, i, j, v)
            if isinstance(v, date):
                cell.number_format = "yyyy-mm-dd"
            elif isinstance(v, Decimal):
                cell.number_format = MONEY
    r = head + len(plan.orders) + 1
    _text(ws, r, 5, "Total").font = Font(bold=True)
    if plan.orders:
        tot = ws.cell(row=r, column=6, value=f"=SUM(F{head + 1}:F{r - 1})")
        tot.font = Font(bold=True)
        tot.number_format = MONEY
    for j, w in enumerate((30, 30, 12, 17, 7, 13, 9, 14, 60), start=1):
        ws.column_dimensions[get_column_letter(j)].width = w


REASON_HEADER = [
    "Supplier", "Part", "Description", "Policy", "Class", "Fill target", "Forecast over cover",
    "Cover days", "Lead days", "Lead spread days", "Review days", "Lead-time quantile",
    "Level", "EOQ", "On hand", "Past shelf life", "On order", "Position", "Raw need",
    "For kits", "Kits assembled", "Spare to kits", "Rounded", "Minimum", "Shelf-life cap",
    "Use by", "Caps", "Topped up",
    "Budget cut", "Qty", "Unit", "Unit cost", "Value", "Expected fill", "Fill before caps",
    "Need date", "Order by", "Build-ahead", "Supplier choice", "Reason",
]


def _reason_rows(plan: Plan) -> list[list[Any]]:
    rows = []
    for ln in sorted(plan.lines, key=lambda x: (x.qty == 0, x.supplier, x.part)):
        rows.append([
            ln.supplier, ln.part, ln.description, ln.policy, ln.abc, ln.fill_target,
            round(ln.forecast_cover, 2), ln.cover_days, ln.lead_days, ln.lead_sd_days,
            ln.review_days, round(ln.lead_quantile, 2), round(ln.level, 2), round(ln.eoq, 1),
            ln.on_hand, ln.expired, ln.on_order, ln.position, ln.raw_need, ln.for_kits,
            ln.assembled, ln.to_kits, ln.rounded, ln.minimum, ln.shelf_cap, ln.shelf_limit,
            ", ".join(ln.caps),
            ln.topped_up, ln.budget_cut, ln.qty, ln.unit, ln.unit_cost, ln.value, ln.expected_fill,
            ln.fill_before_caps, ln.need_date, ln.order_by, round(ln.build_ahead, 1),
            ln.supplier_choice, ln.reason,
        ])
    return rows


def write_plan_workbook(plan: Plan, path: str | Path) -> Path:
    """Write the plan workbook (see the module docstring); returns the path."""
    wb = Workbook()
    wb.remove(wb.active)
    _summary(wb, plan)
    for order in plan.orders:
        _po_sheet(wb, plan, order)
    pct = "0.0%"
    sheets = [
        SheetSpec("Reasons", REASON_HEADER, _reason_rows(plan),
                  widths={"Reason": 120, "Supplier choice": 50, "Description": 30},
                  number_formats={"Fill target": pct, "Expected fill": pct,
                                  "Fill before caps": pct, "Unit cost": "0.0000",
                                  "Value": MONEY}),
        SheetSpec("Not covered", ["Part", "Supplier", "Units", "Why"],
                  [[u.part, u.supplier or "", u.need, u.reason] for u in plan.uncovered],
                  widths={"Why": 110}),
        SheetSpec("Kits", ["Kit", "Need", "How", "Kit price", "Loose seals per kit",
                           "From loose stock", "From loose on this plan", "Why"],
                  [[k.kit, k.need, k.how, k.cost_whole, k.cost_loose, k.from_stock,
                    k.from_loose, k.reason] for k in plan.kits],
                  widths={"Why": 110}, number_formats={"Kit price": MONEY,
                                                       "Loose seals per kit": MONEY}),
    ]
    for spec in sheets:
        fill_sheet(wb.create_sheet(spec.name), spec)
    return save_workbook(wb, path)


ORDER_LINE_HEADER = ["part", "qty", "unit cost", "line total", "received"]


def write_order_workbook(order: dict[str, Any], path: str | Path) -> Path:
    """One purchase order (the plain data of ``ordering.service.order_detail``) as a
    workbook: sheet "order" holds the header as field/value rows, sheet "lines" its lines.
    Every cell goes through the sheets writer's formula guard; no formulas."""
    from inventory.sheets.write import write_workbook

    header = [("reference", order["ref"]), ("supplier", order["supplier"]),
              ("supplier name", order.get("supplier_name", "")), ("status", order["status"]),
              ("created", order.get("created")), ("order by", order.get("order_by")),
              ("expected", order.get("expected")), ("total", order["total"])]
    lines = [[ln["part"], ln["qty"], ln["unit_cost"], ln["line_total"], ln["received"]]
             for ln in order["lines"]]
    return write_workbook(path, [
        SheetSpec("order", ["field", "value"], header),
        SheetSpec("lines", ORDER_LINE_HEADER, lines,
                  number_formats={"unit cost": "#,##0.00##", "line total": "#,##0.00"}),
    ])
