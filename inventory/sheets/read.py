"""Reading tables from csv and xlsx files (xlsx through python-calamine, which is fast).

A :class:`Table` is a header and its rows, each row with the 1-based row number a
spreadsheet program shows, so every later error can name its cell. Fully blank rows are
dropped; nothing else is interpreted here.
"""

from __future__ import annotations

import csv
import io
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from inventory.errors import InventoryError, Source
from inventory.sheets.cells import is_blank

SPREADSHEET_SUFFIXES = {".xlsx", ".xlsm", ".xls", ".ods"}


@dataclass
class Table:
    name: str
    file: str
    sheet: str | None
    header: list[str]
    header_row: int
    rows: list[tuple[int, list[Any]]] = field(default_factory=list)


def _to_table(name: str, file: str, sheet: str | None, grid: list[list[Any]]) -> Table:
    start = next((i for i, row in enumerate(grid) if not all(is_blank(v) for v in row)), None)
    if start is None:
        return Table(name, file, sheet, [], 1, [])
    header = ["" if is_blank(h) else str(h).strip() for h in grid[start]]
    while header and not header[-1]:
        header.pop()
    rows = [
        (start + 2 + i, list(row))
        for i, row in enumerate(grid[start + 1:])
        if not all(is_blank(v) for v in row)
    ]
    return Table(name, file, sheet, header, start + 1, rows)


def decode_csv(data: bytes, file: str) -> tuple[str, str]:
    """Text of a csv file and the encoding used: UTF-8 (with or without BOM), else the
    Windows western code page that spreadsheet programs often save in."""
    for enc in ("utf-8-sig", "cp1252"):
        try:
            return data.decode(enc), enc
        except UnicodeDecodeError:
            continue
    raise InventoryError(f"{file}: cannot decode the file as UTF-8 or Windows-1252",
                         hint="save it as 'CSV UTF-8' from the spreadsheet program")


def read_csv(path: Path) -> Table:
    data = path.read_bytes()
    text, _ = decode_csv(data, str(path))
    try:
        dialect = csv.Sniffer().sniff(text[:4096], delimiters=",;\t")
    except csv.Error:
        dialect = csv.excel
    grid = [list(r) for r in csv.reader(io.StringIO(text), dialect)]
    return _to_table(path.stem, path.name, None, grid)


def read_workbook(path: Path, sheets: list[str] | None = None) -> list[Table]:
    from python_calamine import CalamineWorkbook

    try:
        wb = CalamineWorkbook.from_path(str(path))
    except Exception as exc:  # corrupt, encrypted, not a workbook
        msg = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        raise InventoryError(
            f"{path.name}: cannot read the workbook ({msg})",
            hint="check it opens in a spreadsheet program and is not password-protected",
        ) from None
    names = wb.sheet_names
    if sheets:
        missing = [s for s in sheets if s not in names]
        if missing:
            raise InventoryError(
                f"{path.name}: no sheet named {missing[0]!r} (sheets: {', '.join(names)})",
                kind="schema",
            )
        names = sheets
    out = []
    for name in names:
        grid = wb.get_sheet_by_name(name).to_python(skip_empty_area=False)
        out.append(_to_table(name, path.name, name, grid))
    return out


def read_tables(path: str | Path, sheets: list[str] | None = None) -> list[Table]:
    """Tables in a csv file, a workbook (one per sheet) or a folder of both."""
    p = Path(path)
    if not p.exists():
        raise InventoryError(f"{p}: no such file or folder")
    if p.is_dir():
        out: list[Table] = []
        for child in sorted(p.iterdir()):
            if child.suffix.lower() == ".csv":
                out.append(read_csv(child))
            elif child.suffix.lower() in SPREADSHEET_SUFFIXES and not child.name.startswith("~$"):
                out.extend(read_workbook(child))
        return out
    if p.suffix.lower() == ".csv":
        return [read_csv(p)]
    if p.suffix.lower() in SPREADSHEET_SUFFIXES:
        return read_workbook(p, sheets)
    raise InventoryError(f"{p.name}: expected a .csv or .xlsx file",
                         source=Source(p.name))
