"""Opening one table for an import: a csv file or one sheet of a workbook, with what the
importer must know about it besides its cells.

- Which sheet: the one asked for, else the sheet whose first rows look most like our headers.
- Which row is the header: files often carry a title or an export date above it, so the
  first rows are scored and the best one wins (the rows above it are reported, not read).
- The workbook's date system (1900 or 1904), its formula cells (read as their saved values,
  or reported when none was saved) and merged cells (a merged header cannot name columns).
- For csv, the encoding it was read in.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from inventory.core.errors import InventoryError, Source
from inventory.sheets.cells import is_blank
from inventory.sheets.read import (
    SPREADSHEET_SUFFIXES,
    Table,
    csv_grid,
    open_workbook,
    table_from_grid,
)
from inventory.sheets.xlsx import FormulaCell, formula_cells, is_1904

HEADER_SCAN_ROWS = 10


@dataclass
class SourceSheet:
    table: Table
    sheets: list[str] = field(default_factory=list)
    date1904: bool = False
    encoding: str | None = None
    formulas: list[FormulaCell] = field(default_factory=list)
    merged: list[tuple[int, int, int, int]] = field(default_factory=list)  # 1-based r0 c0 r1 c1
    above: list[int] = field(default_factory=list)  # non-blank rows skipped above the header
    chosen_by: str = "only sheet"

    def source(self) -> Source:
        return Source(self.table.file, self.table.sheet)


def _header_row(grid: Sequence[Sequence[Any]], score: Callable[[list[Any]], float],
                scan: int = HEADER_SCAN_ROWS) -> tuple[int | None, float]:
    """0-based index of the best header among the first ``scan`` non-blank rows."""
    best, best_score, seen = None, -1.0, 0
    for i, row in enumerate(grid):
        if all(is_blank(v) for v in row):
            continue
        s = score(list(row))
        if s > best_score:
            best, best_score = i, s
        seen += 1
        if seen >= scan:
            break
    return best, best_score


def read_source(path: str | Path, score: Callable[[list[Any]], float], *,
                sheet: str | None = None, scan: int = HEADER_SCAN_ROWS) -> SourceSheet:
    """Read the table to import from ``path``. ``score`` rates a row as a header (the number
    of cells that name one of our fields)."""
    p = Path(path)
    if not p.exists():
        raise InventoryError(f"{p}: no such file", hint="check the path")
    if p.is_dir():
        raise InventoryError(f"{p}: is a folder, expected a .csv or .xlsx file")
    suffix = p.suffix.lower()
    if suffix == ".csv" or suffix == ".txt":
        if sheet:
            raise InventoryError(f"{p.name}: a csv file has no sheets (--sheet {sheet})",
                                 hint="leave out --sheet for csv files")
        grid, enc = csv_grid(p)
        start, _ = _header_row(grid, score, scan)
        if start is None:
            raise InventoryError(f"{p.name}: the file holds no data",
                                 hint="export the sheet again with its header row and data")
        table = table_from_grid(p.stem, p.name, None, grid, start)
        above = [i + 1 for i, r in enumerate(grid[:start]) if not all(is_blank(v) for v in r)]
        return SourceSheet(table, [], False, enc, above=above, chosen_by="csv")
    if suffix not in SPREADSHEET_SUFFIXES:
        raise InventoryError(f"{p.name}: expected a .csv or .xlsx file",
                             hint="save the sheet as .xlsx or CSV UTF-8")
    wb = open_workbook(p)
    try:
        names = list(wb.sheet_names)
        if not names:
            raise InventoryError(f"{p.name}: the workbook has no sheets")
        if sheet is not None:
            match = [n for n in names if n == sheet] or [n for n in names
                                                        if n.lower() == sheet.lower()]
            if not match:
                raise InventoryError(
                    f"{p.name}: no sheet named {sheet!r} (sheets: {', '.join(names)})",
                    kind="schema", hint="give one of the sheet names above with --sheet")
            chosen, how = match[0], "--sheet"
        elif len(names) == 1:
            chosen, how = names[0], "only sheet"
        else:
            scores = []
            for n in names:
                try:
                    head = wb.get_sheet_by_name(n).to_python(skip_empty_area=False, nrows=40)
                except Exception:  # a chart sheet or an unreadable one: not a candidate
                    continue
                scores.append((_header_row(head, score, scan)[1], -names.index(n), n))
            if not scores:
                raise InventoryError(f"{p.name}: no sheet with cells to read")
            chosen, how = max(scores)[2], "best headers"
        try:
            ws = wb.get_sheet_by_name(chosen)
            grid = ws.to_python(skip_empty_area=False)
            merged = [(r0 + 1, c0 + 1, r1 + 1, c1 + 1)
                      for (r0, c0), (r1, c1) in (ws.merged_cell_ranges or [])]
        except InventoryError:
            raise
        except Exception as exc:
            msg = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
            raise InventoryError(f"{p.name}:{chosen}: cannot read the sheet ({msg})",
                                 hint="check it opens in a spreadsheet program") from None
    finally:
        try:
            wb.close()
        except Exception:  # noqa: S110 - closing is best effort
            pass
    start, _ = _header_row(grid, score, scan)
    if start is None:
        raise InventoryError(f"{p.name}: sheet {chosen!r} is empty",
                             hint="choose the sheet that holds the data with --sheet" if
                             len(names) > 1 else "fill in the header row and the data")
    table = table_from_grid(chosen, p.name, chosen, grid, start)
    above = [i + 1 for i, r in enumerate(grid[:start]) if not all(is_blank(v) for v in r)]
    formulas = formula_cells(p, chosen) if suffix in (".xlsx", ".xlsm") else []
    return SourceSheet(table, names, is_1904(p) if suffix in (".xlsx", ".xlsm") else False,
                       None, formulas, merged, above, how)
