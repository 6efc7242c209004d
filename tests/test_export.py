"""Exports and templates: every table to csv and xlsx with the shop's figures, jobs in the
layout the history import reads (an export imports into another database unchanged),
templates with drop-down lists and an example that imports, and LibreOffice Calc reading
our workbooks with the same values."""

from __future__ import annotations

import csv
from datetime import UTC, date, datetime
from decimal import Decimal

import pytest
from openpyxl import load_workbook
from sqlmodel import Session

from inventory.catalog.load import load_catalog
from inventory.core import migrate
from inventory.core.db import make_engine, transaction
from inventory.history.exports import TABLES, export_table, write_template
from inventory.history.imports import KINDS, ImportSettings, run_import
from inventory.history.jobs import JobItem, JobSpec, list_jobs, record_job
from inventory.stock import ledger
from tests.conftest import write_catalog
from tests.test_import_support import cli
from tests.test_sheets_write import soffice_sheets


def activity(engine) -> None:
    at = datetime(2025, 5, 2, 9, 30, tzinfo=UTC)
    with transaction(engine) as s:
        ledger.receive(s, ledger.Receipt(
            "OR-214", 30, "0.25", lot="A", cured="2025Q1", received=date(2025, 5, 1), ts=at))
        ledger.receive(s, ledger.Receipt("WP-32", 10, "6.50", lot="W", received=date(2025, 5, 2), ts=at))
        ledger.receive(s, ledger.Receipt("OIL-5", 1000, "0.02", lot="O", received=date(2025, 5, 2), ts=at))
        record_job(s, JobSpec("J-1", date(2025, 6, 1), "XC-32", "lower_leg",
                              (JobItem("K-TST", 1), JobItem("OIL-5", 120)), hours=40,
                              fork_ref="F-9"))
        record_job(s, JobSpec("=J-2", date(2025, 6, 2), "XC-32", "damper",
                              (JobItem("OR-214", 3),)))
        ledger.adjust(s, ledger.Adjustment(
            "OR-214", -1, reason="=cmd|' /C calc'!A0 (dropped)",
            ts=datetime(2025, 6, 3, 17, 5, 30, tzinfo=UTC)))


def _csv_rows(path):
    with open(path, newline="", encoding="utf-8") as fh:
        return list(csv.reader(fh))


@pytest.mark.parametrize("table", TABLES)
def test_every_table_to_csv_and_xlsx(store, tmp_path, table):
    activity(store)
    with Session(store) as s:
        p_csv, n_csv = export_table(s, table, tmp_path / f"{table}.csv")
        p_xlsx, n_xlsx = export_table(s, table, tmp_path / f"{table}.xlsx")
    rows = _csv_rows(p_csv)
    assert n_csv == n_xlsx == len(rows) - 1 > 0
    ws = load_workbook(p_xlsx)[table]
    assert [c.value for c in ws[1]] == rows[0]
    assert ws.freeze_panes == "A2" and ws["A1"].font.b
    assert ws.auto_filter.ref == f"A1:{ws.cell(1, ws.max_column).column_letter}{n_xlsx + 1}"


def test_stock_and_lots_figures(store, tmp_path):
    activity(store)
    with Session(store) as s:
        export_table(s, "stock", tmp_path / "stock.xlsx")
        export_table(s, "lots", tmp_path / "lots.csv")
        expected = {ln.part: ln.on_hand for ln in ledger.on_hand(s)}
    ws = load_workbook(tmp_path / "stock.xlsx")["stock"]
    got = {r[0]: r[2] for r in ws.iter_rows(min_row=2, values_only=True)}
    assert got == expected == {"OIL-5": 880, "OR-214": 30 - 1 - 3 - 1, "WP-32": 10 - 2}
    assert ws["D2"].number_format == "#,##0.00##"
    lots = {r[1]: r for r in _csv_rows(tmp_path / "lots.csv")[1:]}
    assert lots["A"][:4] == ["OR-214", "A", "2025Q1", "2025-05-01"]
    assert Decimal(lots["A"][4]) == Decimal("0.25")
    assert lots["A"][7] == "25"


def test_formula_like_text_is_exported_as_text(store, tmp_path):
    activity(store)
    with Session(store) as s:
        export_table(s, "movements", tmp_path / "m.csv")
        export_table(s, "movements", tmp_path / "m.xlsx")
        export_table(s, "jobs", tmp_path / "jobs.csv")
    reasons = [r[9] for r in _csv_rows(tmp_path / "m.csv")[1:] if r[9]]
    assert reasons == ["'=cmd|' /C calc'!A0 (dropped)"]
    ws = load_workbook(tmp_path / "m.xlsx")["movements"]
    cell = next(c for c in ws["J"] if c.value and str(c.value).startswith("=cmd"))
    assert cell.data_type == "s" and cell.quotePrefix
    assert "'=J-2" in [r[0] for r in _csv_rows(tmp_path / "jobs.csv")]


def test_jobs_export_imports_into_another_database_unchanged(store, tmp_path):
    activity(store)
    with Session(store) as s:
        export_table(s, "jobs", tmp_path / "jobs.xlsx")
        original = [j.to_dict() for j in list_jobs(s, newest_first=False)]
    other = make_engine(f"sqlite:///{tmp_path / 'other.db'}", fresh=True)
    migrate.upgrade(other)
    with transaction(other) as s:
        load_catalog(s, write_catalog(tmp_path / "cat2"))
    settings = ImportSettings(kind="history", stock=False, today=date(2026, 1, 1))
    with transaction(other) as s:
        rep = run_import(s, tmp_path / "jobs.xlsx", settings, apply=True)
    assert rep.new == 2 and not rep.problems
    with Session(other) as s:
        assert [j.to_dict() for j in list_jobs(s, newest_first=False)] == original


@pytest.mark.parametrize("kind", KINDS)
def test_templates_have_lists_and_an_example_that_imports(store, tmp_path, kind):
    activity(store)
    path = tmp_path / f"{kind}.xlsx"
    with Session(store) as s:
        write_template(s, kind, path)
    wb = load_workbook(path)
    assert wb.sheetnames == [kind, "example", "lists"] and wb["lists"].sheet_state == "hidden"
    header = [c.value for c in wb[kind][1]]
    assert header == [c.value for c in wb["example"][1]]
    assert wb[kind].max_row == 1 and wb["example"].max_row == 2
    lists = {wb["lists"].cell(1, c).value for c in range(1, wb["lists"].max_column + 1)}
    expected = {"history": {"history.fork", "history.service", "history.item", "history.kit"},
                "counts": {"counts.part", "counts.location"},
                "receipts": {"receipts.part", "receipts.supplier", "receipts.location"},
                "catalog": {"catalog.kind", "catalog.unit"}}[kind]
    assert lists == expected
    assert len(wb[kind].data_validations.dataValidation) == len(expected)
    settings = ImportSettings(kind=kind, today=date(2030, 1, 1))
    with Session(store) as s:
        empty = run_import(s, path, settings)  # the data sheet: headers only, said so
        assert (empty.rows, [p.kind for p in empty.problems]) == (0, ["empty"])
        assert str(empty.problems[0]) == (f"{kind}.xlsx:{kind}: sheet {kind!r} has a header "
                                          "row (row 1) but no data rows")
        example = run_import(s, path, ImportSettings(kind=kind, sheet="example",
                                                     today=date(2030, 1, 1)))
        assert example.problems == [] and example.new == 1, example.problems


def test_cli_export_and_template(tmp_path):
    db = str(tmp_path / "e.db")
    cli("--db", db, "init")
    cli("--db", db, "catalog", "load", str(write_catalog(tmp_path / "cat")))
    code, out, err = cli("--db", db, "export", "parts", "--csv", str(tmp_path / "p.csv"))
    assert code == 0 and out.strip() == f"wrote {tmp_path / 'p.csv'} (4 row(s))"
    code, _, err = cli("--db", db, "export", "parts")
    assert code == 1 and err.strip() == "error: give exactly one of --xlsx FILE or --csv FILE"
    code, _, err = cli("--db", db, "export", "orders", "--csv", str(tmp_path / "o.csv"))
    assert err.strip() == ("error: unknown table 'orders' (use one of parts, stock, lots, "
                           "movements, jobs)")
    code, out, err = cli("--db", db, "template", "history", "--xlsx", str(tmp_path / "t.xlsx"))
    assert code == 0 and "fill in the 'history' sheet" in out


@pytest.mark.slow
def test_libreoffice_reads_our_workbooks_with_the_same_values(store, tmp_path):
    # A real spreadsheet program: LibreOffice Calc converts each exported workbook to csv;
    # its values equal ours (numbers as numbers, dates as dates, risky text as text).
    activity(store)
    with Session(store) as s:
        for table in ("parts", "stock", "jobs", "movements"):
            export_table(s, table, tmp_path / f"{table}.xlsx")
            export_table(s, table, tmp_path / f"{table}.csv")
    for table in ("parts", "stock", "jobs", "movements"):
        ours = _csv_rows(tmp_path / f"{table}.csv")
        theirs = soffice_sheets(tmp_path / f"{table}.xlsx", tmp_path / f"lo-{table}")[table]
        assert len(theirs) == len(ours)
        for a, b in zip(ours, theirs, strict=True):
            assert [_same(x) for x in a] == [_same(y) for y in b], (table, a, b)


def _same(v: str):
    """One form for a csv value from our writer or from LibreOffice's (which shows numbers
    in their number format and our leading apostrophe as the text it protects)."""
    v = v.strip()
    if v.startswith("'") and v[1:2] in "=+-@":
        v = v[1:]
    t = v.replace(",", "")
    try:
        return Decimal(t).normalize()
    except Exception:
        return v
