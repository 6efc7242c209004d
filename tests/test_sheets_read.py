"""Reading workbooks and csv files: calamine and openpyxl agree on the same workbook; the
1904 date system, formula cells and merged cells are found in the xlsx parts; bad files get
one clear message with a hint."""

from __future__ import annotations

import re
import zipfile
from datetime import date, datetime
from pathlib import Path

import pytest
from openpyxl import Workbook, load_workbook

from inventory.core.errors import InventoryError
from inventory.sheets.read import csv_grid, read_tables
from inventory.sheets.source import read_source
from inventory.sheets.xlsx import formula_cells, is_1904

ROWS = [
    ["job", "date", "fork", "qty", "cost", "note"],
    ["J-1", datetime(2024, 3, 25), "TR-34", 2, 0.25, "=not a formula"],
    ["J-2", date(2024, 3, 26), "trail 34mm", 1, 12.5, None],
    ["J-3", "2024-03-27", "EN-36", 3, 1e-3, "naïve ünïcode ✓"],
    [None, None, None, None, None, None],
    ["J-4", datetime(2024, 3, 28, 17, 45), "XC-30", 10, 1234567.891, "-5"],
]


def _write(path: Path, rows=ROWS, *, epoch_1904: bool = False) -> Path:
    wb = Workbook()
    ws = wb.active
    ws.title = "Jobs"
    if epoch_1904:
        wb.epoch = datetime(1904, 1, 1)
    for r, row in enumerate(rows, start=1):
        for c, v in enumerate(row, start=1):
            cell = ws.cell(r, c, v)
            if isinstance(v, str):
                cell.data_type = "s"  # text, even when it starts with "="
    wb.save(path)
    return path


def _normal(v):
    """One form for a value whichever reader produced it."""
    if v is None or v == "":
        return None
    if isinstance(v, datetime):
        return v.date() if v.time() == datetime.min.time() else v
    if isinstance(v, int | float) and not isinstance(v, bool):
        return float(v)
    return v


def _openpyxl_rows(path: Path, sheet: str) -> list[list]:
    ws = load_workbook(path, data_only=True)[sheet]
    out = []
    for row in ws.iter_rows(values_only=True):
        vals = [_normal(v) for v in row]
        if any(v is not None for v in vals):
            out.append(vals)
    return out


def _calamine_rows(path: Path, sheet: str) -> list[list]:
    table = read_tables(path, [sheet])[0]
    return [[_normal(v) for v in table.header]] + [
        [_normal(v) for v in row] for _, row in table.rows]


@pytest.mark.parametrize("epoch_1904", [False, True])
def test_calamine_and_openpyxl_read_the_same_rows(tmp_path, epoch_1904):
    # Two independent readers (python-calamine, openpyxl) of one workbook give equal rows,
    # in both date systems.
    path = _write(tmp_path / "same.xlsx", epoch_1904=epoch_1904)
    assert _calamine_rows(path, "Jobs") == _openpyxl_rows(path, "Jobs")
    assert is_1904(path) is epoch_1904


def test_row_numbers_are_the_spreadsheets(tmp_path):
    table = read_tables(_write(tmp_path / "n.xlsx"), ["Jobs"])[0]
    assert [r for r, _ in table.rows] == [2, 3, 4, 6]  # the blank row 5 is dropped


def test_formula_cells_with_and_without_saved_values(tmp_path):
    path = tmp_path / "f.xlsx"
    wb = Workbook()
    ws = wb.active
    ws.title = "S"
    ws.append(["a", "b"])
    ws.append([2, "=A2*3"])
    ws.append([4, "=SUM(A2:A3)"])
    wb.save(path)
    found = formula_cells(path, "S")
    assert [(f.row, f.column, f.formula, f.has_value) for f in found] == [
        (2, 2, "A2*3", False), (3, 2, "SUM(A2:A3)", False)]  # openpyxl saves no values
    # a program that calculates saves the value beside the formula: <f>A2*3</f><v>6</v>
    saved = tmp_path / "saved.xlsx"
    with zipfile.ZipFile(path) as z, zipfile.ZipFile(saved, "w") as out:
        for info in z.infolist():
            data = z.read(info.filename)
            if info.filename == "xl/worksheets/sheet1.xml":
                # openpyxl writes an empty value as <v /> or <v></v> (with lxml)
                data = re.sub(rb"<f>A2\*3</f><v\s*(/>|></v>)", b"<f>A2*3</f><v>6</v>", data)
            out.writestr(info, data)
    found = formula_cells(saved, "S")
    assert [(f.row, f.has_value) for f in found] == [(2, True), (3, False)]
    assert read_tables(saved, ["S"])[0].rows[0][1] == [2.0, 6.0]  # calamine: the saved value


def test_merged_cells_and_header_row_found(tmp_path):
    path = tmp_path / "m.xlsx"
    wb = Workbook()
    ws = wb.active
    ws.title = "S"
    ws.append(["Export of the till"])
    ws.merge_cells("A1:C1")
    ws.append([])
    ws.append(["job", "date", "qty"])
    ws.append(["J-1", "2024-01-02", 1])
    wb.save(path)

    def score(row):
        return sum(1 for v in row if v in ("job", "date", "qty"))

    src = read_source(path, score)
    assert src.table.header == ["job", "date", "qty"] and src.table.header_row == 3
    assert src.above == [1] and src.merged == [(1, 1, 1, 3)]
    assert src.table.rows == [(4, ["J-1", "2024-01-02", 1.0])]


@pytest.mark.parametrize(("encoding", "bom"), [
    ("utf-8", b""), ("utf-8", b"\xef\xbb\xbf"), ("cp1252", b""), ("utf-16-le", b"\xff\xfe"),
    ("utf-16-be", b"\xfe\xff"),
])
def test_csv_encodings(tmp_path, encoding, bom):
    text = "part;qty;note\nOR-214;2;Dichtung für Gabel\n"
    path = tmp_path / "c.csv"
    path.write_bytes(bom + text.encode(encoding))
    grid, used = csv_grid(path)
    assert grid == [["part", "qty", "note"], ["OR-214", "2", "Dichtung für Gabel"]]
    assert used in ({"utf-8": "utf-8-sig"}.get(encoding, encoding), "utf-16")


@pytest.mark.parametrize(("content", "suffix", "message", "hint"), [
    (b"", ".csv", "the file is empty", "export the sheet again"),
    (b"   \n\n", ".csv", "the file is empty", "export the sheet again"),
    (b"", ".xlsx", "the file is empty", "export the sheet again"),
    (b"this is not a zip", ".xlsx", "cannot read the workbook", "not password-protected"),
    (b"part,qty\x00\x00\x00", ".csv", "holds NUL bytes", "CSV UTF-8"),
    # MS-OFFCRYPTO: an encrypted xlsx is an OLE compound file (magic D0 CF 11 E0 A1 B1 1A E1)
    # holding an "EncryptedPackage" stream; this stand-in has just those two marks.
    (b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + b"\x00" * 504 + "EncryptedPackage".encode("utf-16-le"),
     ".xlsx", "password-protected", "remove the password"),
])
def test_bad_files_get_one_message_and_a_hint(tmp_path, content, suffix, message, hint):
    path = tmp_path / f"bad{suffix}"
    path.write_bytes(content)
    with pytest.raises(InventoryError) as info:
        read_source(path, lambda row: 0)
    assert message in str(info.value) and hint in (info.value.hint or "")
    assert str(info.value).startswith(f"bad{suffix}: ")


def test_missing_sheet_names_the_sheets(tmp_path):
    path = _write(tmp_path / "s.xlsx")
    with pytest.raises(InventoryError, match=r"s.xlsx: no sheet named 'Nope' \(sheets: Jobs\)"):
        read_source(path, lambda row: 0, sheet="Nope")


def test_best_sheet_is_chosen_by_its_headers(tmp_path):
    path = tmp_path / "two.xlsx"
    wb = Workbook()
    wb.active.title = "Cover"
    wb.active.append(["Quarterly export"])
    ws = wb.create_sheet("Data")
    ws.append(["job", "date"])
    ws.append(["J-1", "2024-01-01"])
    wb.save(path)
    src = read_source(path, lambda row: sum(v in ("job", "date") for v in row))
    assert (src.table.sheet, src.chosen_by) == ("Data", "best headers")
