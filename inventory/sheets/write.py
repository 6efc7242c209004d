"""Writing tables to xlsx (openpyxl) and csv.

Workbooks are styled for people: bold frozen header, filters, widths that fit, number
formats. Text that a spreadsheet would take for a formula (starting with ``=``, ``+``, ``-``,
``@``, tab or carriage return) is written as text, never evaluated.
"""

from __future__ import annotations

import csv
import os
import tempfile
from collections.abc import Sequence
from dataclasses import dataclass, field
from datetime import date, datetime
from decimal import Decimal
from pathlib import Path
from typing import Any

from openpyxl import Workbook
from openpyxl.styles import Alignment, Font, PatternFill
from openpyxl.utils import get_column_letter

FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")
HEADER_FILL = PatternFill("solid", fgColor="DDE4EE")


def guard_text(value: Any) -> Any:
    """Make text that starts like a formula harmless (a leading apostrophe in csv)."""
    if isinstance(value, str) and value.startswith(FORMULA_STARTS):
        return "'" + value
    return value


@dataclass
class SheetSpec:
    name: str
    header: list[str]
    rows: Sequence[Sequence[Any]]
    widths: dict[str, float] = field(default_factory=dict)
    number_formats: dict[str, str] = field(default_factory=dict)


def _cell_value(value: Any) -> Any:
    if isinstance(value, Decimal):
        return float(value)
    if hasattr(value, "value") and isinstance(value.value, str):  # enums
        return value.value
    return value


def fill_sheet(ws, spec: SheetSpec) -> None:
    ws.append(list(spec.header))
    for c in ws[1]:
        c.font = Font(bold=True)
        c.fill = HEADER_FILL
        c.alignment = Alignment(vertical="center")
    widths = [len(str(h)) + 2 for h in spec.header]
    for r, row in enumerate(spec.rows, start=2):
        for c, value in enumerate(row, start=1):
            v = _cell_value(value)
            cell = ws.cell(row=r, column=c, value=v)
            if isinstance(v, str):
                cell.data_type = "s"  # never a formula, whatever it starts with
                if v.startswith(FORMULA_STARTS):
                    cell.quotePrefix = True
            elif isinstance(v, datetime):
                cell.number_format = "yyyy-mm-dd hh:mm"
            elif isinstance(v, date):
                cell.number_format = "yyyy-mm-dd"
            elif isinstance(value, Decimal):
                cell.number_format = "#,##0.00##"
            if c <= len(widths):
                widths[c - 1] = max(widths[c - 1], min(60, len(str(v if v is not None else "")) + 2))
    for i, h in enumerate(spec.header, start=1):
        letter = get_column_letter(i)
        ws.column_dimensions[letter].width = spec.widths.get(h, widths[i - 1])
        if h in spec.number_formats:
            for cell in ws[letter][1:]:
                cell.number_format = spec.number_formats[h]
    ws.freeze_panes = "A2"
    if spec.header:
        ws.auto_filter.ref = f"A1:{get_column_letter(len(spec.header))}{max(1, len(spec.rows) + 1)}"


def atomic_path(path: Path):
    """A temporary file beside ``path``; rename over it when complete, so a reader never
    sees half a file."""
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=".~", suffix=path.suffix, dir=path.parent)
    os.close(fd)
    return Path(tmp)


def write_workbook(path: str | Path, sheets: Sequence[SheetSpec], *, workbook: Workbook | None = None
                   ) -> Path:
    path = Path(path)
    wb = workbook or Workbook()
    if workbook is None:
        wb.remove(wb.active)
    for spec in sheets:
        fill_sheet(wb.create_sheet(spec.name[:31]), spec)
    tmp = atomic_path(path)
    try:
        wb.save(tmp)
        os.replace(tmp, path)
    finally:
        if tmp.exists():
            tmp.unlink()
    return path


def write_csv(path: str | Path, header: Sequence[str], rows: Sequence[Sequence[Any]]) -> Path:
    path = Path(path)
    tmp = atomic_path(path)
    try:
        with open(tmp, "w", newline="", encoding="utf-8") as fh:
            w = csv.writer(fh)
            w.writerow(header)
            for row in rows:
                w.writerow(["" if v is None else guard_text(_cell_value(v)) for v in row])
        os.replace(tmp, path)
    finally:
        if tmp.exists():
            tmp.unlink()
    return path
