"""Writing tables to xlsx (openpyxl) and csv.

Workbooks are styled for people: bold frozen header, filters, widths that fit, number
formats. Text that a spreadsheet would take for a formula (starting with ``=``, ``+``, ``-``,
``@``, tab or carriage return) is written as text, never evaluated.
"""

from __future__ import annotations

import csv
import errno
import os
import re
import tempfile
from collections.abc import Iterator, Sequence
from contextlib import contextmanager
from dataclasses import dataclass, field
from datetime import date, datetime
from decimal import Decimal
from pathlib import Path
from typing import Any

from openpyxl import Workbook
from openpyxl.styles import Alignment, Font, PatternFill
from openpyxl.utils import get_column_letter, quote_sheetname
from openpyxl.worksheet.datavalidation import DataValidation

FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")
HEADER_FILL = PatternFill("solid", fgColor="DDE4EE")
LISTS_SHEET = "lists"


_ESCAPED = re.compile(r"_(x[0-9A-Fa-f]{4}_)")


def xml_text(value: str) -> str:
    """Text as an xlsx cell must hold it to read back unchanged: XML turns a carriage return
    into a line feed, so it is written as the escape ``_x000D_`` (ECMA-376 Part 1, 22.9.2.19
    ST_Xstring), and a literal ``_xHHHH_`` gets its underscore escaped (``_x005F_``)."""
    if "_x" in value:
        value = _ESCAPED.sub(r"_x005F_\1", value)
    if "\r" in value:
        value = value.replace("\r", "_x000D_")
    return value


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
    #: header -> the values its drop-down list offers (kept on a hidden "lists" sheet)
    lists: dict[str, Sequence[str]] = field(default_factory=dict)
    #: headers whose drop-down only suggests: other values are allowed after a warning
    loose_lists: frozenset[str] = frozenset()
    #: how many rows below the header carry the drop-down lists
    list_rows: int = 1000


def _cell_value(value: Any) -> Any:
    if isinstance(value, Decimal):
        return float(value)
    if hasattr(value, "value") and isinstance(value.value, str):  # enums
        return value.value
    return value


def put_cell(ws, row: int, column: int, value: Any):
    """Write one cell through the formula guard: text is stored as text (never evaluated,
    whatever it starts with, shown with a quote prefix when it starts like a formula);
    Decimal as a number. Every cell this tool fills from data goes through here (or
    :func:`fill_sheet`, which uses it); only a module's own computed formulas are written
    directly. Returns the cell."""
    v = _cell_value(value)
    cell = ws.cell(row=row, column=column)
    if isinstance(v, str):
        cell.value = xml_text(v)
        cell.data_type = "s"
        if v.startswith(FORMULA_STARTS):
            cell.quotePrefix = True
    else:
        cell.value = v
    return cell


def fill_sheet(ws, spec: SheetSpec) -> None:
    for c, h in enumerate(spec.header, start=1):
        put_cell(ws, 1, c, h)
    for c in ws[1]:
        c.font = Font(bold=True)
        c.fill = HEADER_FILL
        c.alignment = Alignment(vertical="center")
    widths = [len(str(h)) + 2 for h in spec.header]
    for r, row in enumerate(spec.rows, start=2):
        for c, value in enumerate(row, start=1):
            v = _cell_value(value)
            cell = ws.cell(row=r, column=c, value=xml_text(v) if isinstance(v, str) else v)
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
                shown = len(str(v if v is not None else "")) + 2
                widths[c - 1] = max(widths[c - 1], min(60, shown))
    for i, h in enumerate(spec.header, start=1):
        letter = get_column_letter(i)
        ws.column_dimensions[letter].width = spec.widths.get(h, widths[i - 1])
        if h in spec.number_formats:
            for cell in ws[letter][1:]:
                cell.number_format = spec.number_formats[h]
    ws.freeze_panes = "A2"
    if spec.header:
        ws.auto_filter.ref = f"A1:{get_column_letter(len(spec.header))}{max(1, len(spec.rows) + 1)}"


def add_list_validation(ws, column: int, first_row: int, last_row: int, source: str, *,
                        strict: bool = True, title: str | None = None) -> DataValidation:
    """A drop-down list on ``column`` (1-based) for rows ``first_row..last_row``, its values
    taken from the range ``source`` (e.g. ``'lists'!$A$2:$A$40``). ``strict`` refuses other
    values; otherwise the program warns and lets the user keep what they typed."""
    dv = DataValidation(type="list", formula1=source, allow_blank=True,
                        errorStyle="stop" if strict else "warning",
                        showErrorMessage=True, showInputMessage=bool(title))
    if title:
        dv.promptTitle = title[:32]
        dv.prompt = "Pick from the list"
    dv.error = "Pick a value from the list" if strict else "Not in the list: keep it anyway?"
    letter = get_column_letter(column)
    dv.add(f"{letter}{first_row}:{letter}{last_row}")
    ws.add_data_validation(dv)
    return dv


def lists_sheet(wb: Workbook):
    """The hidden sheet that holds drop-down values (created on first use)."""
    if LISTS_SHEET in wb.sheetnames:
        return wb[LISTS_SHEET]
    ws = wb.create_sheet(LISTS_SHEET)
    ws.sheet_state = "hidden"
    return ws


def put_list(wb: Workbook, title: str, values: Sequence[str]) -> str:
    """Write ``values`` as a new column of the lists sheet; return the range formula."""
    ws = lists_sheet(wb)
    col = (ws.max_column + 1) if ws.max_column > 1 or ws.cell(1, 1).value is not None else 1
    ws.cell(1, col, title).data_type = "s"
    for r, v in enumerate(values, start=2):
        cell = ws.cell(r, col, str(v))
        cell.data_type = "s"
    letter = get_column_letter(col)
    return f"{quote_sheetname(LISTS_SHEET)}!${letter}$2:${letter}${max(2, len(values) + 1)}"


def _add_lists(wb: Workbook, ws, spec: SheetSpec) -> None:
    for i, h in enumerate(spec.header, start=1):
        values = list(spec.lists.get(h) or ())
        if not values:
            continue
        source = put_list(wb, f"{spec.name}.{h}", values)
        last = max(spec.list_rows, len(spec.rows)) + 1
        add_list_validation(ws, i, 2, last, source, strict=h not in spec.loose_lists, title=h)


@contextmanager
def replacing(path: str | Path) -> Iterator[Path]:
    """Write to the temporary path this yields; on success it replaces ``path`` in one
    rename, on failure it is removed. A reader never sees half a file."""
    path = Path(path)
    try:
        tmp = atomic_path(path)
    except OSError as exc:
        raise _write_failed(path, exc) from exc
    try:
        yield tmp
        os.replace(tmp, path)
    except OSError as exc:
        raise _write_failed(path, exc) from exc
    finally:
        try:
            if tmp.exists():
                tmp.unlink()
        except OSError:
            pass


def _write_failed(path: Path, exc: OSError):
    """A failed write names the file asked for, not the temporary file beside it."""
    from inventory.core.errors import InventoryError

    why = exc.strerror or type(exc).__name__
    if exc.errno in (errno.ENOSPC, errno.EDQUOT):
        return InventoryError(f"disk full: cannot write {path}", kind="disk",
                              hint="free some space and run the command again")
    if exc.errno in (errno.EACCES, errno.EPERM, errno.EROFS):
        return InventoryError(f"permission denied: cannot write {path}", kind="permission",
                              hint="check the file and folder permissions, or write elsewhere")
    return InventoryError(f"cannot write {path}: {why}", kind="file")


def save_workbook(wb: Workbook, path: str | Path) -> Path:
    """Save atomically: a reader never sees half a file."""
    with replacing(path) as tmp:
        wb.save(tmp)
    return Path(path)


def atomic_path(path: Path):
    """A temporary file beside ``path``; rename over it when complete, so a reader never
    sees half a file."""
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=".~", suffix=path.suffix, dir=path.parent)
    os.close(fd)
    # mkstemp makes the file private (0600); a report should have the usual permissions.
    umask = os.umask(0)
    os.umask(umask)
    os.chmod(tmp, 0o666 & ~umask)
    return Path(tmp)


def write_workbook(path: str | Path, sheets: Sequence[SheetSpec], *,
                   workbook: Workbook | None = None) -> Path:
    path = Path(path)
    wb = workbook or Workbook()
    if workbook is None:
        wb.remove(wb.active)
    for spec in sheets:
        ws = wb.create_sheet(spec.name[:31])
        fill_sheet(ws, spec)
        if spec.lists:
            _add_lists(wb, ws, spec)
    if LISTS_SHEET in wb.sheetnames:  # keep the hidden lists last
        last = len(wb.sheetnames) - 1
        wb.move_sheet(LISTS_SHEET, offset=last - wb.sheetnames.index(LISTS_SHEET))
    return save_workbook(wb, path)


def write_csv(path: str | Path, header: Sequence[str], rows: Sequence[Sequence[Any]]) -> Path:
    with replacing(path) as tmp, open(tmp, "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(header)
        for row in rows:
            w.writerow(["" if v is None else guard_text(_cell_value(v)) for v in row])
    return Path(path)
