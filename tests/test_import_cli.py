"""`inventory import` as a user types it: each kind of bad input gets one clear line (with
its cell, value and expectation) and a hint, exits non-zero and writes nothing."""

from __future__ import annotations

import json
import zipfile

import pytest
from openpyxl import Workbook

from inventory.core.db import make_engine
from tests.conftest import write_catalog
from tests.test_import_support import HISTORY_HEADER, book, cli, csv_file, snapshot


@pytest.fixture
def shop(tmp_path):
    db = str(tmp_path / "shop.db")
    assert cli("--db", db, "init")[0] == 0
    assert cli("--db", db, "catalog", "load", str(write_catalog(tmp_path / "cat")))[0] == 0
    assert cli("--db", db, "stock", "receive", "OR-214", "20", "--cost", "0.25")[0] == 0
    return db


def _merged_header(path):
    wb = Workbook()
    ws = wb.active
    ws.title = "Jobs"
    ws.append(["job", "when", None, "fork", "service", "item", "qty"])
    ws.merge_cells("B1:C1")
    ws.append(["M-1", "2024-01-02", None, "XC-32", "damper", "OR-214", 1])
    wb.save(path)
    return path


def _encrypted(path):
    # MS-OFFCRYPTO: an encrypted workbook is an OLE compound file holding "EncryptedPackage"
    path.write_bytes(b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + bytes(504)
                     + "EncryptedPackage".encode("utf-16-le"))
    return path


def _corrupt(path):
    book(path, [HISTORY_HEADER, ["C-1", "2024-01-02", "XC-32", "damper", 1, "x", "OR-214", 1]])
    data = path.read_bytes()
    path.write_bytes(data[: len(data) // 2])  # cut short, as a failed download
    return path


CASES = {
    "empty file": (lambda p: csv_file(p / "e.csv", ""), [],
                   ["error: e.csv: the file is empty (export the sheet again with its header "
                    "row and data)"]),
    "missing sheet": (lambda p: book(p / "h.xlsx", [HISTORY_HEADER]), ["--sheet", "Jobz"],
                      ["error: h.xlsx: no sheet named 'Jobz' (sheets: Jobs) (give one of the "
                       "sheet names above with --sheet)"]),
    "missing required column": (
        lambda p: csv_file(p / "h.csv", "job,date,model no,service,item\n"
                           "J-1,2024-01-02,XC-32,damper,OR-214\n"), [],
        ["error: h.csv:row 1: missing required column 'fork' (headers found: 'job', 'date', "
         "'model no', 'service', 'item') (if 'model no' is the fork, add --map \"model no=fork\"; "
         "nothing was written)"]),
    "merged header cells": (
        lambda p: _merged_header(p / "merged.xlsx"), [],
        ["error: merged.xlsx:Jobs!B1: merged cells B1:C1 in the header row (unmerge the header "
         "cells so each column has its own header; nothing was written)"]),
    "text in number columns": (
        lambda p: csv_file(p / "h.csv", "job,date,fork,service,item,qty\n"
                           "J-1,2024-01-02,XC-32,damper,OR-214,a few\n"), [],
        ["error: h.csv:F2 (qty): expected a whole number, got 'a few' (quantities are whole "
         "numbers above 0 (a return is a stock adjustment); nothing was written)"]),
    "future dates": (
        lambda p: csv_file(p / "h.csv", "job,date,fork,service,item\n"
                           "J-1,2999-01-02,XC-32,damper,OR-214\n"), [],
        ["error: h.csv:B2 (date): date 2999-01-02 is in the future (today is {today}) (write "
         "dates like 2026-03-14, 14/03/2026 or 14 Mar 2026, or use date cells; nothing was "
         "written)"]),
    "negative quantities": (
        lambda p: csv_file(p / "h.csv", "job,date,fork,service,item,qty\n"
                           "J-1,2024-01-02,XC-32,damper,OR-214,-3\n"), [],
        ["error: h.csv:F2 (qty): expected a whole number above 0, got -3 (a return or "
         "correction is a stock adjustment) (quantities are whole numbers above 0 (a return is "
         "a stock adjustment); nothing was written)"]),
    "unknown parts": (
        lambda p: csv_file(p / "h.csv", "job,date,fork,service,item\n"
                           "J-1,2024-01-02,XC-32,damper,OR-215\n"), [],
        ["error: h.csv:E2 (item): unknown part or kit 'OR-215' (did you mean OR-214?) (add "
         "unknown parts to the catalog first (inventory import catalog); nothing was written)"]),
    "corrupt workbook": (lambda p: _corrupt(p / "c.xlsx"), [], [
        "error: c.xlsx: cannot read the workbook ({msg}) (check it opens in a spreadsheet "
        "program and is not password-protected)"]),
    "password-protected workbook": (lambda p: _encrypted(p / "x.xlsx"), [], [
        "error: x.xlsx: the workbook is password-protected (encrypted), so it cannot be read "
        "(open it in the spreadsheet program, remove the password and save a copy)"]),
    "csv in another encoding": (
        lambda p: csv_file(p / "h.csv", "job,date,fork,service,item\nJ-1,2024-01-02,XC-32,"
                           "damper,OR-214\n").with_suffix(".csv"), [], []),
    "csv that is not text": (
        lambda p: (p / "b.csv").write_bytes(b"job,date\n\x81\x8d\x8f\x90\x9d") and p / "b.csv",
        [], ["error: b.csv: cannot decode the file as UTF-8 or Windows-1252 (save it as 'CSV "
             "UTF-8' from the spreadsheet program)"]),
}


@pytest.mark.parametrize("case", list(CASES))
def test_bad_input_one_clear_message_and_nothing_written(shop, tmp_path, case):
    from datetime import date

    make, extra, expected = CASES[case]
    path = make(tmp_path)
    engine = make_engine(f"sqlite:///{shop}")
    before = snapshot(engine)
    code, out, err = cli("--db", shop, "import", "history", str(path), *extra, "--apply")
    lines = err.strip().splitlines()
    if case == "corrupt workbook":
        msg = lines[0].split("(", 1)[1].split(")")[0]
        expected = [e.replace("{msg}", msg) for e in expected]
    expected = [e.replace("{today}", date.today().isoformat()) for e in expected]
    if case == "csv in another encoding":
        assert code == 0  # the plain ASCII file reads in any encoding
        return
    assert code == 1, (out, err)
    assert lines[: len(expected)] == expected
    assert "Traceback" not in err
    assert snapshot(engine) == before


def test_windows_1252_csv_is_read_with_a_warning(shop, tmp_path):
    path = csv_file(tmp_path / "w.csv", "job,date,fork,service,item,qty\n"
                    "J-é,2024-01-02,XC-32,damper,OR-214,1\n", encoding="cp1252")
    code, out, err = cli("--db", shop, "import", "history", str(path), "--json")
    assert code == 0, err
    rep = json.loads(out)
    assert rep["encoding"] == "cp1252" and rep["new"] == 1
    assert rep["warnings"][0]["text"] == "w.csv: read as Windows-1252, not UTF-8: check accented text"


def test_blank_title_and_totals_rows_are_skipped_with_warnings(shop, tmp_path):
    path = book(tmp_path / "t.xlsx", [["Jobs of March"], HISTORY_HEADER,
                                      ["T-1", "2024-03-02", "XC-32", "damper", 5, None,
                                       "OR-214", 2], [None] * 8,
                                      ["T-2", "2024-03-03", "XC-32", "damper", 5, None,
                                       "OR-214", 3],
                                      ["Grand total", None, None, None, None, None, None, 5]])
    code, out, err = cli("--db", shop, "import", "history", str(path), "--apply")
    assert code == 0, err
    assert "warning: t.xlsx:Jobs!row 1: skipped a line above the header row" in out
    assert "warning: t.xlsx:Jobs!row 6: skipped a totals row" in out
    assert "applied as batch 1: 2 job(s)" in out
    code, out, err = cli("--db", shop, "import", "history", str(path), "--apply")
    assert code == 0 and "nothing new: all 2 job(s) were applied before" in out
    assert "nothing changed" in out


def test_json_report_and_map(shop, tmp_path):
    path = csv_file(tmp_path / "m.csv", "Ticket,On,Model,Work,Kit/part,Pcs\n"
                    "M-1,2024-01-02,XC-32,damper,OR-214,2\n")
    code, out, err = cli("--db", shop, "import", "history", str(path), "--json")
    assert code == 1 and json.loads(out)["problems"][0]["text"].startswith(
        "m.csv:row 1: missing required column 'date'")
    code, out, err = cli("--db", shop, "import", "history", str(path), "--json",
                         "--map", "On=date", "--map", "Kit/part=item")
    assert code == 0, err
    rep = json.loads(out)
    assert {m["field"]: (m["header"], m["how"]) for m in rep["mapping"]} == {
        "job": ("Ticket", "alias"), "date": ("On", "map"), "fork": ("Model", "alias"),
        "service": ("Work", "alias"), "item": ("Kit/part", "map"), "qty": ("Pcs", "alias")}
    assert (rep["new"], rep["state"], rep["applied"]) == (1, "preview", False)


def test_usage_errors(shop, tmp_path):
    path = csv_file(tmp_path / "u.csv", "job,date,fork,service,item\n")
    assert cli("--db", shop, "import", "orders", str(path))[2].strip() == (
        "error: unknown import kind 'orders' (use one of history, counts, receipts, catalog)")
    assert cli("--db", shop, "import", "history", str(path), "--map", "x")[2].strip() == (
        "error: bad --map 'x': expected HEADER=FIELD, e.g. --map \"Job No.=job\"")
    assert cli("--db", shop, "import", "history", str(path), "--date-order", "ymd")[2].strip() \
        == "error: bad --date-order 'ymd': expected dmy or mdy"
    assert cli("--db", shop, "import", "history", str(tmp_path / "nope.csv"))[2].strip() == (
        f"error: {tmp_path / 'nope.csv'}: no such file (check the path)")


def test_zip_that_is_not_a_workbook(shop, tmp_path):
    path = tmp_path / "z.xlsx"
    with zipfile.ZipFile(path, "w") as z:
        z.writestr("hello.txt", "hi")
    code, _, err = cli("--db", shop, "import", "history", str(path))
    assert code == 1 and err.startswith("error: z.xlsx: cannot read the workbook")


def test_unwritable_review_workbook_is_a_problem_not_a_crash(shop, tmp_path):
    path = csv_file(tmp_path / "r.csv", "job,date,fork,service,item\n"
                    "R-1,2024-01-02,the blue one,damper,OR-214\n")
    (tmp_path / "a file").write_text("x")
    target = tmp_path / "a file" / "r.review.xlsx"  # its folder is a file
    code, out, err = cli("--db", shop, "import", "history", str(path), "--review", str(target))
    assert code == 1 and "Traceback" not in err
    assert f"error: cannot write the review workbook {target} (" in err
    assert "--review FILE.xlsx" in err


def test_help_texts():
    for args in (["import", "--help"], ["export", "--help"], ["template", "--help"],
                 ["job", "add", "--help"], ["job", "list", "--help"], ["job", "show", "--help"]):
        code, out, _ = cli(*args)
        assert code == 0 and "Usage:" in out and len(out.splitlines()) > 5, args
