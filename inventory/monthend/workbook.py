"""The month-end workbook: a summary sheet with the key figures and native charts (usage by
month, stock value over the last twelve months, ABC Pareto), then one styled sheet per table
(frozen header, filters, number formats, problems highlighted).

Charts are openpyxl's own (drawn by the spreadsheet program from cell ranges on the
``Monthly`` and ``ABC-XYZ`` sheets), so they stay live if someone edits the numbers.

The workbook is written in openpyxl's write-only (streaming) mode, row by row, with one
shared style per column and highlight: a chain's ten thousand parts take a second or two
instead of ten. Text that looks like a formula is stored as text, never evaluated (the same
guard as :mod:`inventory.sheets.write`).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from copy import copy
from datetime import date, datetime
from decimal import Decimal
from pathlib import Path
from xml.sax.saxutils import escape

from openpyxl import Workbook
from openpyxl.cell import WriteOnlyCell
from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE
from openpyxl.chart import BarChart, LineChart, Reference
from openpyxl.styles import Alignment, Font, PatternFill
from openpyxl.utils import get_column_letter
from openpyxl.utils.datetime import to_excel
from openpyxl.xml.functions import fromstring

from inventory.monthend.report import MonthReport
from inventory.sheets.write import HEADER_FILL, SheetSpec, save_workbook

MONEY = "#,##0.00"
QTY = "#,##0"
PCT = "0.0%"
RATIO = "0.00"
DAYS = "#,##0"
DATE = "yyyy-mm-dd"
RED = PatternFill("solid", fgColor="F8CBAD")
AMBER = PatternFill("solid", fgColor="FFE699")
TITLE = Font(bold=True, size=14)
BOLD = Font(bold=True)
PARETO_TOP = 30

SHEETS = ("Summary", "Parts", "Usage by fork", "Count variances", "Slow and dead",
          "Expiring lots", "Below reorder", "ABC-XYZ", "Monthly")


def _fmt(header: Sequence[str], money=(), qty=(), pct=(), ratio=(), days=(), dates=()):
    out = {}
    for names, f in ((money, MONEY), (qty, QTY), (pct, PCT), (ratio, RATIO), (days, DAYS),
                     (dates, DATE)):
        for n in names:
            assert n in header, n
            out[n] = f
    return out


class _Styles:
    """Style arrays built once and copied onto each cell (much cheaper than setting the
    number format, fill and font attribute by attribute on every cell)."""

    def __init__(self, ws):
        self.ws = ws
        self.cache: dict[tuple, object] = {}

    def cell(self, value, number_format=None, fill=None, font=None, text=False):
        c = WriteOnlyCell(self.ws, value)
        key = (number_format, id(fill), id(font))
        if key != (None, id(None), id(None)):
            if key not in self.cache:
                t = WriteOnlyCell(self.ws)
                if number_format:
                    t.number_format = number_format
                if fill is not None:
                    t.fill = fill
                if font is not None:
                    t.font = font
                self.cache[key] = t._style
            c._style = copy(self.cache[key])
        if text:
            c.data_type = "s"  # never a formula, whatever it starts with
        return c


def _plain(value):
    if isinstance(value, Decimal):
        return float(value)
    return value


class _StyleIds:
    """The workbook's style index for each (number format, fill, font) in use, registered
    once through an ordinary cell; rows then carry the index, not a styled cell object."""

    def __init__(self, ws):
        self.ws = ws
        self.ids: dict[tuple, str | None] = {}

    def get(self, number_format=None, fill=None, font=None) -> str | None:
        key = (number_format, id(fill), id(font))
        if key not in self.ids:
            if number_format is None and fill is None and font is None:
                self.ids[key] = None
            else:
                t = WriteOnlyCell(self.ws)
                if number_format:
                    t.number_format = number_format
                if fill is not None:
                    t.fill = fill
                if font is not None:
                    t.font = font
                self.ids[key] = str(self.ws.parent._cell_styles.add(t._style))
        return self.ids[key]


_LETTERS = [get_column_letter(i) for i in range(1, 703)]  # A .. ZZ


def _row_element(row: Sequence[tuple], idx: int, epoch):
    """One ``<row>`` of (value, style index) pairs, written as text and parsed once (much
    quicker than an element per cell). Text is an inline string, as openpyxl itself writes
    it, so it is never taken for a formula."""
    r = str(idx)
    out = [f'<row r="{r}">']
    for j, (v, sid) in enumerate(row):
        s = f' s="{sid}"' if sid is not None else ""
        if v is None or (isinstance(v, float) and not math.isfinite(v)):
            if s:
                out.append(f'<c r="{_LETTERS[j]}{r}"{s}/>')
            continue
        if isinstance(v, str):
            space = ' xml:space="preserve"' if v != v.strip() else ""
            text = escape(ILLEGAL_CHARACTERS_RE.sub("", v))
            out.append(f'<c r="{_LETTERS[j]}{r}"{s} t="inlineStr"><is><t{space}>{text}</t></is></c>')
            continue
        if isinstance(v, bool):
            t, text = "b", "1" if v else "0"
        elif isinstance(v, date):
            t, text = "n", repr(to_excel(v, epoch))
        else:
            t, text = "n", repr(v) if isinstance(v, float) else str(v)
        out.append(f'<c r="{_LETTERS[j]}{r}"{s} t="{t}"><v>{text}</v></c>')
    out.append("</row>")
    return fromstring("".join(out))


def _fast_rows(ws) -> None:
    """Let ``ws.append`` take rows of (value, style index) pairs and write each as one
    element into openpyxl's own sheet stream, instead of one cell object per value: the
    same XML, several times faster for ten thousand parts."""
    epoch = ws.parent.epoch

    def write_rows():
        try:
            xf = ws._writer.xf.send(True)
        except StopIteration:
            ws._already_saved()
        with xf.element("sheetData"):
            idx = 1
            try:
                while True:
                    row = yield
                    xf.write(_row_element(row, idx, epoch))
                    idx += 1
            except GeneratorExit:
                pass
        ws._writer.xf.send(None)

    ws._write_rows = write_rows


def _stream_sheet(wb: Workbook, spec: SheetSpec, rule: tuple[str, dict] | None = None,
                  negative_red: Sequence[str] = ()) -> None:
    """One table as a styled sheet: bold filled header, frozen, filtered, widths that fit
    (judged on the first 200 rows), the spec's number formats, whole rows filled where
    ``rule`` = (column, {value: fill}) matches, negative numbers in red in the named columns."""
    ws = wb.create_sheet(spec.name[:31])
    _fast_rows(ws)
    ids = _StyleIds(ws)
    header = list(spec.header)
    formats = [spec.number_formats.get(h) for h in header]
    red_cols = {header.index(h) for h in negative_red}
    red_font = Font(color="C00000")
    key = header.index(rule[0]) if rule else None
    widths = [len(str(h)) + 2 for h in header]
    for row in spec.rows[:200]:
        for j, v in enumerate(row):
            shown = f"{v:,.2f}" if isinstance(v, float | Decimal) else str(v if v is not None else "")
            widths[j] = max(widths[j], min(60, len(shown) + 2))
    for j, h in enumerate(header, start=1):
        ws.column_dimensions[get_column_letter(j)].width = spec.widths.get(h, widths[j - 1])
    ws.freeze_panes = "A2"
    ws.auto_filter.ref = f"A1:{get_column_letter(len(header))}{max(1, len(spec.rows) + 1)}"
    head = ids.get(None, HEADER_FILL, Font(bold=True))
    ws.append([(h, head) for h in header])
    plain_ids = [ids.get(f) for f in formats]
    for row in spec.rows:
        fill = rule[1].get(row[key]) if rule else None
        out = []
        for j, v in enumerate(row):
            if isinstance(v, Decimal):
                v = float(v)
            fmt = formats[j]
            if fmt is None and isinstance(v, date):
                fmt = "yyyy-mm-dd hh:mm" if isinstance(v, datetime) else "yyyy-mm-dd"
            elif fill is None and j not in red_cols:
                out.append((v, plain_ids[j]))
                continue
            font = red_font if j in red_cols and isinstance(v, int | float) and v < 0 else None
            out.append((v, ids.get(fmt, fill, font)))
        ws.append(out)


def _parts_sheet(r: MonthReport) -> SheetSpec:
    h = ["part", "description", "unit", "opening qty", "opening value", "receipts qty",
         "receipts value", "job issues qty", "job issues value", "other issues qty",
         "other issues value", "adjust qty", "adjust value", "count variance qty",
         "count variance value", "closing qty", "closing value", "turns (month, annualised)",
         "turns (12 months)", "days of supply", "ABC", "XYZ", "last issue", "status"]
    rows = [[p.part, p.description, p.unit, p.opening_qty, p.opening_value, p.receipts_qty,
             p.receipts_value, p.job_issues_qty, p.job_issues_value, p.other_issues_qty,
             p.other_issues_value, p.adjust_qty, p.adjust_value, p.count_qty, p.count_value,
             p.closing_qty, p.closing_value, p.turns, p.turns_12m, p.days_of_supply, p.abc,
             p.xyz, p.last_issue, p.status] for p in r.parts]
    return SheetSpec("Parts", h, rows, widths={"description": 36}, number_formats=_fmt(
        h, money=[x for x in h if x.endswith("value")],
        qty=[x for x in h if x.endswith("qty")],
        ratio=["turns (month, annualised)", "turns (12 months)"], days=["days of supply"],
        dates=["last issue"]))


def _sheets(r: MonthReport) -> list[tuple[SheetSpec, tuple[str, dict] | None]]:
    out: list[tuple[SheetSpec, tuple[str, dict] | None]] = []
    out.append((_parts_sheet(r), ("status", {"dead": RED, "slow": AMBER})))

    h = ["fork family", "service level", "jobs", "units", "value"]
    out.append((SheetSpec("Usage by fork", h, [[u.fork_family, u.service_level, u.jobs, u.units,
                                                u.value] for u in r.fork_usage],
                          number_formats=_fmt(h, money=["value"], qty=["jobs", "units"])), None))

    h = ["part", "description", "variance qty", "variance value", "closing qty", "result"]
    rows = [[p.part, p.description, p.count_qty, p.count_value, p.closing_qty,
             "loss" if p.count_qty < 0 else "gain"] for p in r.count_variances]
    out.append((SheetSpec("Count variances", h, rows, widths={"description": 36},
                          number_formats=_fmt(h, money=["variance value"],
                                              qty=["variance qty", "closing qty"])),
                ("result", {"loss": RED})))

    h = ["part", "description", "status", "on hand", "value", "last issue", "first arrival"]
    rows = [[p.part, p.description, p.status, p.closing_qty, p.closing_value, p.last_issue,
             p.first_in] for p in r.stock_problems]
    out.append((SheetSpec("Slow and dead", h, rows, widths={"description": 36},
                          number_formats=_fmt(h, money=["value"], qty=["on hand"],
                                              dates=["last issue", "first arrival"])),
                ("status", {"dead": RED, "slow": AMBER})))

    h = ["part", "lot", "cured", "material", "qty", "value", "storage limit", "status"]
    rows = [[e.lot.part, e.lot.lot, e.lot.cured, e.lot.material, e.lot.qty, e.lot.value,
             e.limit, "past limit" if e.status == "past" else "within 6 months"]
            for e in r.expiring_lots]
    out.append((SheetSpec("Expiring lots", h, rows,
                          number_formats=_fmt(h, money=["value"], qty=["qty"],
                                              dates=["storage limit"])),
                ("status", {"past limit": RED, "within 6 months": AMBER})))

    h = ["part", "description", "on hand", "on order", "reorder point", "suggested qty",
         "suggested value", "basis"]
    rows = [[b.part, b.description, b.on_hand, b.on_order, b.reorder_point, b.suggested_qty,
             (b.suggested_qty * b.unit_cost) if b.unit_cost is not None else None, b.basis]
            for b in r.below_reorder]
    out.append((SheetSpec("Below reorder", h, rows, widths={"description": 36, "basis": 36},
                          number_formats=_fmt(h, money=["suggested value"],
                                              qty=["on hand", "on order", "reorder point",
                                                   "suggested qty"])), None))

    h = ["rank", "part", "annual usage value", "share", "cumulative share", "ABC", "XYZ",
         "CV of monthly demand"]
    total = sum((p.annual_usage_value for p in r.parts), Decimal(0))
    rows, run = [], Decimal(0)
    for i, p in enumerate(r.abc_order, start=1):
        run += p.annual_usage_value
        share = float(p.annual_usage_value / total) if total else 0.0
        rows.append([i, p.part, p.annual_usage_value, share,
                     float(run / total) if total else 0.0, p.abc, p.xyz, p.cv])
    out.append((SheetSpec("ABC-XYZ", h, rows, number_formats=_fmt(
        h, money=["annual usage value"], pct=["share", "cumulative share"],
        ratio=["CV of monthly demand"], qty=["rank"])), None))

    h = ["month", "job issues value", "other issues value", "stock value at month end"]
    rows = [[m.label, j, o, s] for m, j, o, s in zip(r.history, r.job_usage_value,
                                                     r.other_usage_value, r.stock_value,
                                                     strict=True)]
    out.append((SheetSpec("Monthly", h, rows, number_formats=_fmt(
        h, money=["job issues value", "other issues value", "stock value at month end"])), None))
    return out


def key_figures(r: MonthReport) -> list[tuple[str, object, str | None]]:
    """(label, value, number format) for the summary, in reading order."""
    t = r.totals
    return [
        ("Stock value at opening", t.opening_value, MONEY),
        ("Receipts", t.receipts_value, MONEY),
        ("Issues to jobs", t.job_issues_value, MONEY),
        ("Other issues", t.other_issues_value, MONEY),
        ("Adjustments", t.adjust_value, MONEY),
        ("Count variances", t.count_value, MONEY),
        ("Stock value at closing", t.closing_value, MONEY),
        ("Jobs in the month", t.jobs, QTY),
        ("Parts on hand", t.parts_on_hand, QTY),
        ("Turns (month, annualised)", t.turns, RATIO),
        ("Turns (last 12 months)", t.turns_12m, RATIO),
        ("Days of supply", t.days_of_supply, DAYS),
        ("Slow stock value (no issue 6 months)", t.slow_value, MONEY),
        ("Dead stock value (no issue 12 months)", t.dead_value, MONEY),
        ("Lots past their storage limit, value", t.expired_value, MONEY),
        ("Lots within 6 months of it, value", t.expiring_soon_value, MONEY),
        ("Count losses, value", t.count_loss_value, MONEY),
        ("Parts at or below their reorder point", len(r.below_reorder), QTY),
    ]


def _summary(ws, r: MonthReport) -> None:
    """Key figures, problems in red, and the ABC x XYZ matrix (charts go beside them)."""
    st = _Styles(ws)
    right = Alignment(horizontal="right")
    ws.column_dimensions["A"].width = 40
    for col in "BCD":
        ws.column_dimensions[col].width = 18
    # print (and PDF) the summary on one landscape page, charts included
    ws.page_setup.orientation = "landscape"
    ws.page_setup.fitToWidth = ws.page_setup.fitToHeight = 1
    ws.sheet_properties.pageSetUpPr.fitToPage = True
    ws.append([st.cell(f"Stock report {r.month.label}", font=TITLE)])
    ws.append([f"Valuation: {r.method_label}. Month end {r.month.last_day.isoformat()}; "
               f"written {r.today.isoformat()}."])
    ws.append([])
    ws.append([st.cell("Key figure", font=BOLD), st.cell("Value", font=BOLD)])
    problems = {"Dead stock value (no issue 12 months)": r.totals.dead_value > 0,
                "Lots past their storage limit, value": r.totals.expired_value > 0,
                "Count losses, value": r.totals.count_loss_value < 0}
    for label, value, fmt in key_figures(r):
        c = st.cell(_plain(value), fmt, RED if problems.get(label) else None)
        c.alignment = right
        ws.append([label, c])
    ws.append([])
    ws.append([st.cell("ABC x XYZ (parts / usage value)", font=BOLD)])
    ws.append([None] + [st.cell(x, font=BOLD) for x in "XYZ"])
    for a in "ABC":
        row: list = [st.cell(a, font=BOLD)]
        for x in "XYZ":
            cell = [p for p in r.parts if p.abc == a and p.xyz == x]
            value = sum((p.annual_usage_value for p in cell), Decimal(0))
            row.append(f"{len(cell)} / {value:,.0f}")
        ws.append(row)


def _charts(wb: Workbook, r: MonthReport, ws) -> None:
    monthly, abc = wb["Monthly"], wb["ABC-XYZ"]
    n = len(r.history)
    cats = Reference(monthly, min_col=1, min_row=2, max_row=n + 1)

    usage = BarChart()
    usage.type, usage.grouping, usage.overlap = "col", "stacked", 100
    usage.title = "Usage by month (issues at cost)"
    usage.add_data(Reference(monthly, min_col=2, max_col=3, min_row=1, max_row=n + 1),
                   titles_from_data=True)
    usage.set_categories(cats)
    usage.y_axis.title = "value"
    usage.y_axis.numFmt = "#,##0"

    stock = LineChart()
    stock.title = "Stock value at month end, last 12 months"
    stock.add_data(Reference(monthly, min_col=4, min_row=1, max_row=n + 1), titles_from_data=True)
    stock.set_categories(cats)
    stock.y_axis.numFmt = "#,##0"
    stock.legend = None
    for s in stock.series:
        s.smooth = False

    k = max(1, min(PARETO_TOP, sum(1 for p in r.parts if p.annual_usage_value > 0)))
    bars = BarChart()
    bars.title = f"ABC Pareto: annual usage value, top {k} parts"
    bars.add_data(Reference(abc, min_col=3, min_row=1, max_row=k + 1), titles_from_data=True)
    bars.set_categories(Reference(abc, min_col=2, min_row=2, max_row=k + 1))
    bars.y_axis.numFmt = "#,##0"
    cum = LineChart()
    cum.add_data(Reference(abc, min_col=5, min_row=1, max_row=k + 1), titles_from_data=True)
    cum.y_axis.axId = 200
    cum.y_axis.title = "cumulative share"
    cum.y_axis.numFmt = "0%"
    cum.y_axis.scaling.min, cum.y_axis.scaling.max = 0, 1
    cum.y_axis.crosses = "max"
    for s in cum.series:
        s.smooth = False
    bars += cum

    for chart, anchor in ((usage, "F2"), (stock, "F20"), (bars, "F38")):
        chart.width, chart.height = 20, 8.5
        chart.x_axis.delete = False
        chart.y_axis.delete = False
        ws.add_chart(chart, anchor)
    cum.y_axis.delete = False


def write_month_workbook(path: str | Path, r: MonthReport) -> Path:
    """Write the workbook atomically (a reader never sees half a file); returns the path."""
    path = Path(path)
    wb = Workbook(write_only=True)
    summary = wb.create_sheet("Summary")
    _summary(summary, r)
    for spec, rule in _sheets(r):
        _stream_sheet(wb, spec, rule,
                      negative_red=["count variance value"] if spec.name == "Parts" else ())
    _charts(wb, r, summary)
    return save_workbook(wb, path)
