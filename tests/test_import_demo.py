"""The demo's messy history workbook goes through preview, review and apply, and a re-run
is a no-op; the broken variant lists every bad cell and writes nothing; the demo database
records its history as an import."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from sqlmodel import Session, select

from inventory.core.db import make_engine
from inventory.core.tables import ForkAlias, ImportBatch
from inventory.demo.build import build_demo
from inventory.sheets.review import answer_review
from tests.test_import_support import cli, snapshot

DEMO = Path(__file__).resolve().parent.parent / "catalog_demo"
MESSY = DEMO / "messy_history.xlsx"
BROKEN = DEMO / "messy_history_broken.xlsx"


@pytest.fixture
def shop(tmp_path):
    db = str(tmp_path / "demo.db")
    assert cli("--db", db, "init")[0] == 0
    assert cli("--db", db, "catalog", "load", str(DEMO))[0] == 0
    code, _, err = cli("--db", db, "import", "receipts", str(DEMO / "opening_stock.csv"),
                       "--apply")
    assert code == 0, err
    return db


def messy_flow(db: str, tmp_path: Path) -> None:
    review = tmp_path / "messy.review.xlsx"
    engine = make_engine(f"sqlite:///{db}")
    before = snapshot(engine)
    code, out, err = cli("--db", db, "import", "history", str(MESSY), "--review", str(review),
                         "--json")
    rep = json.loads(out)
    assert code == 1 and rep["needs_review"] == 6 and rep["invalid"] == 0
    assert {f["text"] for f in rep["forks"] if f["how"] == "review"} == {
        "34mm trail fork 2019 air", "XC air neg 2023", "dual crown dh"}
    assert {m["field"]: m["how"] for m in rep["mapping"]}["qty"] == "fuzzy"
    assert rep["dates"].startswith("day-first")
    assert rep["header_row"] == 3 and review.exists()
    assert snapshot(engine) == before
    # the person picks a family for each text (here: the best candidate each time)
    answer_review(review)
    code, out, err = cli("--db", db, "import", "history", str(MESSY), "--resolutions",
                         str(review), "--apply")
    assert code == 0, err
    assert "applied as batch" in out and "20 job(s)" in out
    after = snapshot(engine)
    assert after["service_job"] == before["service_job"] + 20
    code, out, err = cli("--db", db, "import", "history", str(MESSY), "--apply")
    assert code == 0 and "nothing new: all 20 job(s) were applied before" in out
    assert snapshot(engine) == after
    with Session(engine) as s:
        assert sorted(a.text for a in s.exec(select(ForkAlias))) == [
            "34mm trail fork 2019 air", "dual crown dh", "xc air neg 2023"]
    code, out, err = cli("--db", db, "import", "history", str(BROKEN), "--apply")
    lines = err.splitlines()
    assert code == 1 and len(lines) == 8 and lines[-1].startswith("error: hint: ")
    assert lines[0].startswith("error: messy_history_broken.xlsx:Jobs export!B30 (Date in): "
                               "expected a date")
    assert snapshot(engine) == after


def test_messy_workbook_preview_review_apply_rerun(shop, tmp_path):
    messy_flow(shop, tmp_path)


@pytest.mark.slow
def test_demo_history_is_an_import_and_the_messy_file_applies_on_top(tmp_path):
    db = str(tmp_path / "demo.db")
    url = build_demo(db, progress=False)
    engine = make_engine(url)
    with Session(engine) as s:
        batches = list(s.exec(select(ImportBatch)))
    marks = [b.kind for b in batches if b.kind.startswith(("build:", "built:"))]
    assert marks == ["build:demo", "built:demo"]  # the demo's build marks (core.build_mark)
    batches = [b for b in batches if b.kind not in marks]
    assert [(b.kind, b.filename) for b in batches] == [("history", "history.csv")]
    code, out, err = cli("--db", db, "import", "history", str(DEMO / "history.csv"))
    assert code == 0 and f"jobs: 0 new, {batches[0].rows} already applied" in out
    messy_flow(db, tmp_path)
