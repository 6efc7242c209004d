"""The stock commands as a user types them: exact error lines, JSON shape, exit codes."""

from __future__ import annotations

import json

import pytest

from tests.conftest import inv, write_catalog


@pytest.fixture
def shop(tmp_path, monkeypatch, capsys):
    db = str(tmp_path / "shop.db")
    assert inv(monkeypatch, capsys, "--db", db, "init")[0] == 0
    cat = write_catalog(tmp_path / "cat")
    assert inv(monkeypatch, capsys, "--db", db, "catalog", "load", str(cat))[0] == 0
    return db


@pytest.mark.parametrize(
    ("args", "line"),
    [
        (["stock", "issue", "OR-215", "1"], "error: unknown part 'OR-215' (did you mean OR-214?)"),
        (["stock", "issue", "OR-214", "-3"], "error: QTY: expected a whole number above 0, got -3"),
        (["stock", "receive", "OR-214", "5", "--cured", "2025Q5"],
         "error: --cured: expected a cure quarter like 2026Q3 (also 3Q26, Q3/26, or the "
         "month 8/26), got '2025Q5'"),
        (["stock", "issue", "OR-214", "11"],
         "error: not enough stock of OR-214: asked 11, on hand 10 (receive stock first, or "
         "record a count if the shelf holds more than the ledger)"),
        (["stock", "move", "OR-214", "1", "--from", "MAIN", "--to", "MIAN"],
         "error: unknown location 'MIAN' (did you mean MAIN?)"),
        (["stock", "adjust", "OR-214", "0", "--reason", "x"],
         "error: QTY: expected a whole number other than 0 (-2 takes two out, 3 adds three), "
         "got 0"),
    ],
)
def test_bad_input_gets_one_exact_line(shop, monkeypatch, capsys, args, line):
    inv(monkeypatch, capsys, "--db", shop, "stock", "receive", "OR-214", "10", "--cost", "0.25")
    code, out, err = inv(monkeypatch, capsys, "--db", shop, *args)
    assert code == 1
    assert err.strip() == line
    # nothing changed: still the 10 received
    code, out, _ = inv(monkeypatch, capsys, "--db", shop, "stock", "on-hand", "--json")
    assert [r["on_hand"] for r in json.loads(out)] == [10]


def test_on_hand_json_lists_part_location_lot(shop, monkeypatch, capsys):
    inv(monkeypatch, capsys, "--db", shop, "stock", "receive", "WP-32", "4", "--cost", "6.5",
        "--lot", "W1", "--cured", "3Q25")
    inv(monkeypatch, capsys, "--db", shop, "stock", "adjust", "WP-32", "-1", "--reason", "torn")
    code, out, err = inv(monkeypatch, capsys, "--db", shop, "stock", "on-hand", "--by-lot", "--json")
    assert code == 0, err
    assert json.loads(out) == [{"part": "WP-32", "location": "MAIN", "on_hand": 3,
                                "value": "19.50", "lot": "W1", "cured": "2025Q3"}]


def test_missing_database_says_how_to_create_it(tmp_path, monkeypatch, capsys):
    db = str(tmp_path / "none.db")
    code, _, err = inv(monkeypatch, capsys, "--db", db, "stock", "on-hand")
    assert code == 1
    assert err.strip() == (f"error: no database file {db} (run `inventory --db {db} init` to "
                           "create it, or `inventory demo` to build the demo shop)")
