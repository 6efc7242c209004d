"""Writing workbooks: text that looks like a formula stays text (in our own readers and in a
real spreadsheet program, LibreOffice Calc run headless), drop-down lists point at the
hidden lists sheet, the review workbook offers each text's candidates first."""

from __future__ import annotations

import csv
import os
import shutil
import subprocess
import uuid
from pathlib import Path

import pytest
from openpyxl import load_workbook

from inventory.sheets.fuzzy import Candidate
from inventory.sheets.read import read_tables
from inventory.sheets.review import ReviewItem, answer_review, read_resolutions, write_review
from inventory.sheets.write import SheetSpec, write_csv, write_workbook

IN_CI = os.environ.get("CI", "").lower() == "true"
# Each starts like a formula to a spreadsheet program (the OWASP "CSV injection" list: =, +,
# -, @, tab and carriage return).
RISKY = ["=1+1", "+2+3", "-4+5", "@SUM(A1:A2)", "\t=1+1", "\r=1+1", "=HYPERLINK(\"x\")"]


def soffice() -> str:
    """The LibreOffice binary; tests skip without it, except under CI=true (where .ci/run
    installs it) when its absence is a failure."""
    path = shutil.which("soffice") or shutil.which("libreoffice")
    if path is None:
        if IN_CI:
            pytest.fail("CI=true and LibreOffice (soffice) is not installed")
        pytest.skip("LibreOffice (soffice) is not installed")
    return path


def soffice_sheets(book: Path, out: Path) -> dict[str, list[list[str]]]:
    """Every sheet of ``book`` as LibreOffice Calc reads it, through its csv export (UTF-8,
    comma, all sheets: filter options token 12 = -1, LibreOffice 7.2 or later)."""
    out.mkdir(parents=True, exist_ok=True)
    profile = out / f"profile-{uuid.uuid4().hex[:8]}"
    filt = "csv:Text - txt - csv (StarCalc):44,34,76,1,,0,false,true,false,false,false,-1"
    subprocess.run([soffice(), f"-env:UserInstallation={profile.as_uri()}", "--headless",
                    "--convert-to", filt, "--outdir", str(out), str(book)],
                   check=True, capture_output=True, timeout=180)
    sheets = {}
    for f in out.glob(f"{book.stem}*.csv"):
        name = f.stem[len(book.stem) + 1:] if f.stem != book.stem else ""
        with open(f, newline="", encoding="utf-8") as fh:
            sheets[name] = list(csv.reader(fh))
    return sheets


def test_risky_text_is_written_as_text(tmp_path):
    path = write_workbook(tmp_path / "r.xlsx", [SheetSpec("S", ["text"], [[t] for t in RISKY])])
    ws = load_workbook(path)["S"]
    cells = [ws.cell(r, 1) for r in range(2, len(RISKY) + 2)]
    # openpyxl does not decode the _x000D_ escape (ECMA-376 Part 1, 22.9.2.19) on reading
    assert [c.value for c in cells] == [t.replace("\r", "_x000D_") for t in RISKY]
    assert all(c.data_type == "s" for c in cells)  # a string cell, not a formula
    assert all(c.quotePrefix for c in cells)  # and shown with the text prefix
    table = read_tables(path, ["S"])[0]
    assert [row[0] for _, row in table.rows] == RISKY


def test_text_with_escape_lookalikes_reads_back_unchanged(tmp_path):
    texts = ["a\rb", "_x000D_ literal", "tab\there", "line\nbreak", "x_x41_y"]
    path = write_workbook(tmp_path / "e.xlsx", [SheetSpec("S", ["t"], [[t] for t in texts])])
    assert [row[0] for _, row in read_tables(path, ["S"])[0].rows] == texts


def test_risky_text_in_csv_gets_an_apostrophe_and_reads_back(tmp_path):
    path = write_csv(tmp_path / "r.csv", ["text"], [[t] for t in RISKY])
    with open(path, newline="", encoding="utf-8") as fh:
        written = [r[0] for r in list(csv.reader(fh))[1:]]
    assert written == ["'" + t for t in RISKY]


@pytest.mark.slow
def test_libreoffice_shows_risky_text_and_never_evaluates_it(tmp_path):
    # A real spreadsheet program: LibreOffice Calc opens the workbook; the csv it exports
    # holds the texts as typed, not the results of formulas (=1+1 would show 2).
    path = write_workbook(tmp_path / "r.xlsx", [SheetSpec("S", ["text", "n"],
                                                          [[t, i] for i, t in enumerate(RISKY)])])
    sheets = soffice_sheets(path, tmp_path / "lo")
    rows = sheets["S"]
    assert rows[0] == ["text", "n"]
    assert [r[0] for r in rows[1:]] == RISKY
    assert [r[1] for r in rows[1:]] == [str(i) for i in range(len(RISKY))]


def test_drop_down_lists_point_at_the_hidden_lists_sheet(tmp_path):
    spec = SheetSpec("history", ["fork", "service"], [],
                     lists={"fork": ["TR-34", "EN-36"], "service": ["lower_leg", "damper"]},
                     loose_lists=frozenset({"fork"}))
    path = write_workbook(tmp_path / "t.xlsx", [spec])
    wb = load_workbook(path)
    assert wb.sheetnames == ["history", "lists"] and wb["lists"].sheet_state == "hidden"
    dvs = {str(dv.sqref): dv for dv in wb["history"].data_validations.dataValidation}
    assert dvs["A2:A1001"].formula1 == "'lists'!$A$2:$A$3"
    assert dvs["A2:A1001"].errorStyle == "warning"  # free text allowed after a warning
    assert dvs["B2:B1001"].formula1 == "'lists'!$B$2:$B$3"
    assert dvs["B2:B1001"].errorStyle == "stop"
    assert [c.value for c in wb["lists"]["A"]] == ["history.fork", "TR-34", "EN-36"]
    ws = wb["history"]
    assert ws.freeze_panes == "A2" and ws["A1"].font.b and ws.auto_filter.ref == "A1:B1"


def test_review_workbook_round_trip(tmp_path):
    items = [ReviewItem("34mm trail fork 2019 air", 3, "C7",
                        (Candidate("TR-34", 85.0), Candidate("TR-32", 75.0))),
             ReviewItem("dual crown dh", 1, "C9", (Candidate("DH-40", 80.0),))]
    choices = [("DH-40", "Downhill"), ("EN-36", "Enduro"), ("TR-32", "Trail 32"),
               ("TR-34", "Trail 34")]
    path = write_review(tmp_path / "r.xlsx", items, choices)
    wb = load_workbook(path)
    ws = wb["review"]
    assert [c.value for c in ws[1]][:5] == ["fork text", "rows", "first cell", "fork family",
                                             "candidate 1"]
    dvs = {str(dv.sqref): dv.formula1 for dv in ws.data_validations.dataValidation}
    assert dvs == {"D2": "'lists'!$A$2:$D$2", "D3": "'lists'!$A$3:$D$3"}
    lists = wb["lists"]
    assert [c.value for c in lists[2]] == ["TR-34", "TR-32", "DH-40", "EN-36"]  # best first
    assert [c.value for c in lists[3]] == ["DH-40", "EN-36", "TR-32", "TR-34"]
    valid = {c.upper(): c for c, _ in choices}
    got, problems = read_resolutions(path, valid)
    assert got == {} and problems == []  # nothing answered yet
    answer_review(path, {"dual crown dh": "dh-40"})
    got, problems = read_resolutions(path, valid)
    assert {k: v[0] for k, v in got.items()} == {"34mm trail fork 2019 air": "TR-34",
                                                  "dual crown dh": "DH-40"}
    assert str(got["dual crown dh"][1]) == "r.xlsx:review!D3 (answer)"
    answer_review(path, {"dual crown dh": "XX-99"})
    _, problems = read_resolutions(path, valid)
    assert [str(p) for p in problems] == [
        "r.xlsx:review!D3 (answer): unknown fork family 'XX-99' for 'dual crown dh'"]
