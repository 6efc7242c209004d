"""`inventory report month` as a user types it: the JSON contract, where files go, and one
exact line for each kind of bad input."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from tests.conftest import inv, write_catalog


@pytest.fixture
def shop(tmp_path, monkeypatch, capsys):
    """A shop with two parts, a job and a count in November 2026."""
    monkeypatch.chdir(tmp_path)
    db = str(tmp_path / "shop.db")

    def ok(*args):
        code, out, err = inv(monkeypatch, capsys, "--db", db, *args)
        assert code == 0, err
        return out

    ok("init")
    ok("catalog", "load", str(write_catalog(tmp_path / "cat")))
    ok("stock", "receive", "OR-214", "40", "--cost", "0.25", "--cured", "2024Q2",
       "--date", "2026-10-01")
    # 4 wipers past their storage limit stay on the shelf (an issue skips them), 2 fresh
    ok("stock", "receive", "WP-32", "4", "--cost", "6.50", "--cured", "2021Q3",
       "--date", "2026-10-01")
    ok("stock", "receive", "WP-32", "2", "--cost", "6.50", "--cured", "2026Q2",
       "--date", "2026-10-01")
    ok("stock", "issue", "OR-214", "12", "--job", "J-1", "--date", "2026-11-10")
    ok("stock", "issue", "WP-32", "2", "--date", "2026-11-12")
    ok("stock", "count", "OR-214", "27", "--date", "2026-11-28")
    return db


TODAY = ("--today", "2026-12-02")


def test_json_contract(shop, monkeypatch, capsys, tmp_path):
    code, out, err = inv(monkeypatch, capsys, "--db", shop, "report", "month", "2026-11",
                         "--json", *TODAY)
    assert code == 0, err
    doc = json.loads(out)
    assert set(doc) >= {"month", "valuation_method", "totals", "parts", "dead_stock",
                        "expiring_lots", "below_reorder"}
    assert doc["month"] == "2026-11"
    assert doc["valuation_method"] == "FIFO by cure date (lot cost, as the ledger issues)"
    t = doc["totals"]
    assert {k: t[k] for k in ("opening_value", "receipts_value", "issues_value",
                              "adjustments_value", "closing_value")} == {
        "opening_value": "49.00", "receipts_value": "0.00", "issues_value": "16.00",
        "adjustments_value": "-0.25", "closing_value": "32.75"}
    parts = {p["part"]: p for p in doc["parts"]}
    assert {k: parts["OR-214"][k] for k in ("opening_qty", "closing_qty", "closing_value",
                                             "job_issues_qty", "count_variance_qty")} == {
        "opening_qty": 40, "closing_qty": 27, "closing_value": "6.75", "job_issues_qty": 12,
        "count_variance_qty": -1}
    assert parts["WP-32"]["other_issues_qty"] == 2
    # AU wiper cured 2021Q3: ISO 2230 group A, 5 years from the quarter's end
    assert doc["expiring_lots"][0]["limit"] == "2026-09-30"
    assert doc["expiring_lots"][0]["status"] == "past"
    assert not (tmp_path / "reports").exists()  # --json alone writes no workbook


def test_default_workbook_and_html(shop, monkeypatch, capsys, tmp_path):
    code, out, err = inv(monkeypatch, capsys, "--db", shop, "report", "month", "2026-11",
                         "--html", "summary.html", *TODAY)
    assert code == 0, err
    assert (tmp_path / "reports" / "stock-2026-11.xlsx").is_file()
    assert (tmp_path / "summary.html").read_text(encoding="utf-8").startswith("<!doctype html>")
    assert "wrote reports/stock-2026-11.xlsx" in out
    code, out, err = inv(monkeypatch, capsys, "--db", shop, "report", "month", "2026-11",
                         "--xlsx", "x/book.xlsx", "--method", "average", *TODAY)
    assert code == 0 and (tmp_path / "x" / "book.xlsx").is_file()
    assert "moving average" in out


@pytest.mark.parametrize(("args", "line"), [
    (["2026-13"], "error: month: expected a month like 2026-03, 03/2026 or Mar 2026, got "
                  "'2026-13' (the last complete month is 2026-11)"),
    (["11-2025x"], "error: month: expected a month like 2026-03, 03/2026 or Mar 2026, got "
                   "'11-2025x' (the last complete month is 2026-11)"),
    (["2027-02"], "error: month 2027-02 is in the future (today is 2026-12-02) (the last "
                  "complete month is 2026-11)"),
    (["2026-12"], "error: month 2026-12 is not over yet (today is 2026-12-02) (the last "
                  "complete month is 2026-11)"),
    (["2026-08"], "error: no stock movements up to the end of 2026-08: nothing to report (the "
                  "ledger starts 2026-10)"),
])
def test_bad_input_gets_one_exact_line(shop, monkeypatch, capsys, tmp_path, args, line):
    code, out, err = inv(monkeypatch, capsys, "--db", shop, "report", "month", *args, *TODAY)
    assert code == 1
    assert err.strip() == line
    assert not (tmp_path / "reports").exists()


def test_broken_ledger_names_the_part_and_writes_nothing(shop, monkeypatch, capsys, tmp_path):
    import sqlite3

    con = sqlite3.connect(shop)
    with con:  # a stray row written behind the ledger's back
        con.execute("INSERT INTO movement (ts, part_id, location_id, lot_id, qty, kind, unit_cost)"
                    " SELECT '2026-11-20 12:00:00.000000', part_id, location_id, lot_id, 3, "
                    "'xfer', unit_cost FROM movement WHERE kind = 'receipt' LIMIT 1")
    con.close()
    code, out, err = inv(monkeypatch, capsys, "--db", shop, "report", "month", "2026-11",
                         "--xlsx", "book.xlsx", *TODAY)
    assert code == 1
    lines = err.strip().splitlines()
    assert lines[0] == ("error: the ledger does not reconcile for 2026-11 in 1 part(s); the "
                        "report is not written")
    assert lines[1].startswith("error: OR-214: opening 40 + in/out -13 = 27, but closing is 30 "
                               "(+3 in movements of unknown kind)")
    assert not Path(tmp_path / "book.xlsx").exists()


def test_demo_month_end_writes_the_last_complete_month(shop, tmp_path):
    """What the demo tour calls: the workbook and the page for the last month with data."""
    from datetime import date

    from inventory.demo.tour import demo_month_end

    files = demo_month_end(shop, tmp_path / "reports", today=date(2026, 12, 2))
    assert files.report.month.label == "2026-11"
    assert files.xlsx == tmp_path / "reports" / "stock-2026-11.xlsx" and files.xlsx.is_file()
    assert files.html == tmp_path / "reports" / "stock-2026-11.html" and files.html.is_file()
    # a ledger that stops in November is reported for November even a year later
    later = demo_month_end(shop, tmp_path / "later", today=date(2027, 11, 5))
    assert later.report.month.label == "2026-11"
