"""No silent overwrites in imports (issue 12, item 6): a header-only file, a catalog row that
re-types a part with stock, and a re-imported job whose lines changed each end in one line at
the file's cell (file:sheet!cell, the value, what was expected), exit 1 and write nothing.

The expected lines are this project's own error contract (the issue's wording), checked
through the console entry point exactly as a user sees them."""

from __future__ import annotations

from datetime import date

import pytest
from sqlmodel import Session, select

from inventory.core.db import make_engine
from inventory.core.tables import Part
from tests.conftest import write_catalog
from tests.test_import_support import book, cli, csv_file, snapshot

NOTHING = "nothing was written"


@pytest.fixture
def shop(tmp_path):
    db = str(tmp_path / "shop.db")
    assert cli("--db", db, "init")[0] == 0
    assert cli("--db", db, "catalog", "load", str(write_catalog(tmp_path / "cat")))[0] == 0
    assert cli("--db", db, "stock", "receive", "OR-214", "36", "--cost", "0.25")[0] == 0
    assert cli("--db", db, "stock", "receive", "WP-32", "10", "--cost", "1.50")[0] == 0
    return db


def _refused(db, *args):
    """Run an import that must be refused: (stderr lines, database unchanged)."""
    engine = make_engine(f"sqlite:///{db}")
    before = snapshot(engine)
    code, out, err = cli("--db", db, "import", *args)
    assert code == 1, (out, err)
    assert "Traceback" not in err
    return err.strip().splitlines(), snapshot(engine) == before


# --- a header-only file says so ---------------------------------------------------------


@pytest.mark.parametrize("apply", [[], ["--apply"]], ids=["preview", "apply"])
def test_header_only_csv_is_an_error(shop, tmp_path, apply):
    path = csv_file(tmp_path / "h.csv", "job,date,fork,service,item,qty\n")
    lines, unchanged = _refused(shop, "history", str(path), *apply)
    assert lines == [
        "error: h.csv: the file has a header row (row 1) but no data rows (fill in the rows "
        f"below the header, or export the sheet that holds them; {NOTHING})"]
    assert unchanged


def test_header_only_sheet_names_the_sheet(shop, tmp_path):
    # blank rows under the header are no data either
    path = book(tmp_path / "c.xlsx", [["date", "part", "location", "counted"], [None] * 4],
                sheet="Counts")
    lines, unchanged = _refused(shop, "counts", str(path), "--apply")
    assert lines == [
        "error: c.xlsx:Counts: sheet 'Counts' has a header row (row 1) but no data rows (fill "
        f"in the rows below the header, or export the sheet that holds them; {NOTHING})"]
    assert unchanged


# --- a catalog import never re-types a part with stock ------------------------------------


def test_catalog_refuses_new_kind_or_unit_for_a_stocked_part(shop, tmp_path):
    path = csv_file(tmp_path / "c.csv", "code,kind,unit,description\n"
                    "OR-214,oil,ml,Fork oil\n"
                    "OIL-5,oil,ml,Fork oil 5wt (new text)\n")
    lines, unchanged = _refused(shop, "catalog", str(path), "--apply")
    assert lines[:2] == [
        "error: c.csv:B2 (kind): part OR-214 has stock movements (36 each on hand): kind 'oil' "
        "would change it, expected 'o_ring'",
        "error: c.csv:C2 (unit): part OR-214 has stock movements (36 each on hand): unit 'ml' "
        "would change it, expected 'each'"]
    assert lines[2].endswith("give the new item its own part code; nothing was written")
    assert unchanged  # the valid OIL-5 row is not written either: all or nothing
    with Session(make_engine(f"sqlite:///{shop}")) as s:
        part = s.exec(select(Part).where(Part.code == "OR-214")).one()
        assert (part.kind, part.unit) == ("o_ring", "each")


def test_catalog_may_retype_a_part_without_movements_and_edit_a_stocked_one(shop, tmp_path):
    # OIL-5 has never moved: its kind and unit may still be corrected; OR-214's own kind
    # and unit written again, with a new description, are no change of kind
    path = csv_file(tmp_path / "c.csv", "code,kind,unit,description\n"
                    "OIL-5,grease,each,Grease tub\n"
                    "OR-214,o_ring,each,O-ring 24.99 x 3.53 NBR 70\n")
    code, out, err = cli("--db", shop, "import", "catalog", str(path), "--apply")
    assert code == 0, err
    with Session(make_engine(f"sqlite:///{shop}")) as s:
        parts = {p.code: p for p in s.exec(select(Part))}
    assert (parts["OIL-5"].kind, parts["OIL-5"].unit) == ("grease", "each")
    assert (parts["OR-214"].kind, parts["OR-214"].unit) == ("o_ring", "each")
    assert parts["OR-214"].description == "O-ring 24.99 x 3.53 NBR 70"


# --- a changed job is a conflict, not "already applied" -----------------------------------


def _job_file(path, rows):
    return csv_file(path, "job,date,fork,service,hours,item,qty\n" + "".join(
        ",".join(str(c) for c in r) + "\n" for r in rows))


def test_reimported_job_with_changed_lines_is_a_conflict_at_its_cells(shop, tmp_path):
    today = date.today().isoformat()
    first = _job_file(tmp_path / "a.csv", [["J-1", today, "XC-32", "damper", "", "OR-214", 1],
                                           ["J-1", today, "XC-32", "damper", "", "WP-32", 1]])
    code, out, err = cli("--db", shop, "import", "history", str(first), "--apply")
    assert code == 0 and "applied as batch 1: 1 job(s)" in out, err
    changed = _job_file(tmp_path / "b.csv", [["J-1", today, "XC-32", "damper", "", "OR-214", 2],
                                             ["J-1", today, "XC-32", "damper", "", "OIL-5", 1]])
    lines, unchanged = _refused(shop, "history", str(changed), "--apply")
    assert lines[:3] == [
        "error: b.csv:F2 (item): job J-1 is already recorded with 1 x WP-32, which the file "
        "does not list",
        "error: b.csv:G2 (qty): job J-1 is already recorded with 1 x OR-214, the file says 2",
        "error: b.csv:F3 (item): job J-1 is already recorded without OIL-5 (the file says 1)"]
    assert lines[3].startswith("error: hint: a job is imported once") or lines[3].startswith(
        "hint: a job is imported once")
    assert unchanged
    # the preview says the same and exits 1; the original file is still "nothing new"
    assert cli("--db", shop, "import", "history", str(changed))[0] == 1
    code, out, err = cli("--db", shop, "import", "history", str(first), "--apply")
    assert code == 0 and "nothing new: all 1 job(s) were applied before" in out, err


def test_same_job_written_another_way_is_already_applied(shop, tmp_path):
    # K-TST is not on hand, so the job books its bill of materials (2 x WP-32, 1 x OR-214,
    # tests/conftest.py TINY kit_lines). The same job in another file (hours added, which
    # changes its key) or listing those parts instead of the kit is the same job.
    today = date.today().isoformat()
    kit = _job_file(tmp_path / "k.csv", [["J-7", today, "XC-32", "lower_leg", "", "K-TST", 1]])
    code, out, err = cli("--db", shop, "import", "history", str(kit), "--apply")
    assert code == 0 and "applied as batch 1: 1 job(s)" in out, err
    engine = make_engine(f"sqlite:///{shop}")
    before = snapshot(engine)
    hours = _job_file(tmp_path / "h.csv", [["J-7", today, "XC-32", "lower_leg", 30, "K-TST", 1]])
    loose = _job_file(tmp_path / "l.csv", [["J-7", today, "XC-32", "lower_leg", "", "WP-32", 2],
                                           ["J-7", today, "XC-32", "lower_leg", "", "OR-214", 1]])
    for path in (hours, loose):
        code, out, err = cli("--db", shop, "import", "history", str(path), "--apply")
        assert code == 0 and "nothing new: all 1 job(s) were applied before" in out, (out, err)
    assert snapshot(engine) == before
    # one part more than the kit held is a conflict at its quantity cell
    more = _job_file(tmp_path / "m.csv", [["J-7", today, "XC-32", "lower_leg", "", "WP-32", 3],
                                          ["J-7", today, "XC-32", "lower_leg", "", "OR-214", 1]])
    lines, unchanged = _refused(shop, "history", str(more), "--apply")
    assert lines == ["error: m.csv:G2 (qty): job J-7 is already recorded with 2 x WP-32, "
                     "the file says 3 (a job is imported once: give a corrected job a new "
                     f"reference, or correct stock with a stock adjustment; {NOTHING})"]
    assert unchanged


def test_catalog_load_refuses_the_same_change(shop, tmp_path):
    # `inventory catalog load` writes parts too: the same rule at the parts file's cell
    folder = write_catalog(tmp_path / "cat2")
    text = (folder / "parts.csv").read_text(encoding="utf-8")
    (folder / "parts.csv").write_text(text.replace("OR-214,o_ring,", "OR-214,oil,")
                                      .replace("NBR,70,,each,AS568-214", "NBR,70,,ml,AS568-214"),
                                      encoding="utf-8")
    engine = make_engine(f"sqlite:///{shop}")
    before = snapshot(engine)
    code, out, err = cli("--db", shop, "catalog", "load", str(folder))
    assert code == 1 and "Traceback" not in err
    assert err.strip().splitlines()[:2] == [
        "error: parts.csv:B2 (kind): part OR-214 has stock movements (36 each on hand): kind "
        "'oil' would change it, expected 'o_ring'",
        "error: parts.csv:K2 (unit): part OR-214 has stock movements (36 each on hand): unit "
        "'ml' would change it, expected 'each'"]
    assert snapshot(engine) == before
    # the unchanged catalog loads again (no movement, no change of kind: no complaint)
    assert cli("--db", shop, "catalog", "load", str(write_catalog(tmp_path / "cat3")))[0] == 0


def test_stocked_part_rule_on_both_databases(store, tmp_path):
    """The same two refusals through the library on SQLite and PostgreSQL (the stock query
    is SQL: a correlated EXISTS and a summed balance)."""
    from dataclasses import replace

    from inventory.catalog.load import load_catalog
    from inventory.core.db import transaction
    from inventory.core.errors import InventoryError
    from inventory.history.imports import ImportSettings, run_import
    from inventory.stock import ledger

    with transaction(store) as s:
        ledger.receive(s, ledger.Receipt("OR-214", 36, "0.25", user="test"))
    path = csv_file(tmp_path / "c.csv", "code,kind,unit\nOR-214,oil,ml\nWP-32,grease,each\n")
    with Session(store) as s:
        rep = run_import(s, path, replace(ImportSettings(kind="catalog")))
    assert [(p.source.row, p.source.column, p.message.split(":")[1].strip()) for p in
            rep.problems] == [(2, 2, "kind 'oil' would change it, expected 'o_ring'"),
                              (2, 3, "unit 'ml' would change it, expected 'each'")]
    folder = write_catalog(tmp_path / "cat2")
    parts = folder / "parts.csv"
    parts.write_text(parts.read_text(encoding="utf-8").replace("OR-214,o_ring,", "OR-214,oil,"),
                     encoding="utf-8")
    with pytest.raises(InventoryError) as err, transaction(store) as s:
        load_catalog(s, folder)
    assert [str(p) for p in err.value.problems] == [
        "parts.csv:B2 (kind): part OR-214 has stock movements (36 each on hand): kind 'oil' "
        "would change it, expected 'o_ring'"]
