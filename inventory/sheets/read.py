"""Reading tables from csv and xlsx files (xlsx through python-calamine, which is fast).

A :class:`Table` is a header and its rows, each row with the 1-based row number a
spreadsheet program shows, so every later error can name its cell. Fully blank rows are
dropped; nothing else is interpreted here.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from inventory.core.errors import InventoryError, Source
from inventory.sheets.cells import is_blank
from inventory.sheets.csvread import csv_grid, csv_text_grid, decode_csv  # noqa: F401

SPREADSHEET_SUFFIXES = {".xlsx", ".xlsm", ".xls", ".ods"}


@dataclass
class Table:
    name: str
    file: str
    sheet: str | None
    header: list[str]
    header_row: int
    rows: list[tuple[int, list[Any]]] = field(default_factory=list)


def has_data(row: list[Any]) -> bool:
    """True when any cell of the row holds something (fast: called for every row)."""
    for v in row:
        if v is None or v == "":
            continue
        t = type(v)
        if t is str and not v.strip():
            continue
        if t is float and v != v:  # NaN
            continue
        return True
    return False


def _to_table(name: str, file: str, sheet: str | None, grid: list[list[Any]],
              start: int | None = None) -> Table:
    """A table whose header is row ``start`` (0-based) of the grid, by default the first
    row that is not blank; rows after it, blank rows dropped."""
    if start is None:
        start = next((i for i, row in enumerate(grid) if has_data(row)), None)
    if start is None:
        return Table(name, file, sheet, [], 1, [])
    header = ["" if is_blank(h) else str(h).strip() for h in grid[start]]
    while header and not header[-1]:
        header.pop()
    rows = [(start + 2 + i, row if type(row) is list else list(row))
            for i, row in enumerate(grid[start + 1:])
            if (row and row[0].__class__ is str and row[0] and not row[0].isspace())
            or has_data(row)]  # the first test is a shortcut for the usual row
    return Table(name, file, sheet, header, start + 1, rows)


def read_csv(path: Path) -> Table:
    grid, _ = csv_grid(path)
    return _to_table(path.stem, path.name, None, grid)


def open_workbook(path: Path):
    """A calamine workbook, or an :class:`InventoryError` saying why the file cannot be read
    (password-protected, corrupt, not a workbook, empty)."""
    from python_calamine import CalamineWorkbook

    head = b""
    try:
        with open(path, "rb") as fh:
            head = fh.read(8)
            size = path.stat().st_size
    except OSError as exc:
        raise InventoryError(f"{path.name}: cannot open the file ({exc.strerror})") from None
    if size == 0:
        raise InventoryError(f"{path.name}: the file is empty",
                             hint="export the sheet again with its header row and data")
    if head == OLE_MAGIC and path.suffix.lower() in (".xlsx", ".xlsm") and is_encrypted(path):
        raise InventoryError(
            f"{path.name}: the workbook is password-protected (encrypted), so it cannot be read",
            hint="open it in the spreadsheet program, remove the password and save a copy")
    try:
        return CalamineWorkbook.from_path(str(path))
    except Exception as exc:  # corrupt, encrypted, not a workbook
        msg = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        if type(exc).__name__ == "PasswordError" or "password" in msg.lower():
            raise InventoryError(
                f"{path.name}: the workbook is password-protected, so it cannot be read",
                hint="open it in the spreadsheet program, remove the password and save a copy",
            ) from None
        raise InventoryError(
            f"{path.name}: cannot read the workbook ({msg})",
            hint="check it opens in a spreadsheet program and is not password-protected",
        ) from None


OLE_MAGIC = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1"


def is_encrypted(path: Path) -> bool:
    """An encrypted xlsx is an OLE compound file holding an ``EncryptedPackage`` stream
    (MS-OFFCRYPTO); the stream name is stored in UTF-16LE in the directory."""
    try:
        data = path.read_bytes()
    except OSError:
        return False
    return data.startswith(OLE_MAGIC) and "EncryptedPackage".encode("utf-16-le") in data


def read_workbook(path: Path, sheets: list[str] | None = None) -> list[Table]:
    wb = open_workbook(path)
    names = wb.sheet_names
    if sheets:
        missing = [s for s in sheets if s not in names]
        if missing:
            raise InventoryError(
                f"{path.name}: no sheet named {missing[0]!r} (sheets: {', '.join(names)})",
                kind="schema", hint="give one of the sheet names above with --sheet",
            )
        names = sheets
    out = []
    for name in names:
        grid = wb.get_sheet_by_name(name).to_python(skip_empty_area=False)
        out.append(_to_table(name, path.name, name, grid))
    return out


def table_from_grid(name: str, file: str, sheet: str | None, grid: list[list[Any]],
                    header_row: int) -> Table:
    """A table whose header is the 0-based ``header_row`` of ``grid``."""
    return _to_table(name, file, sheet, grid, header_row)


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
