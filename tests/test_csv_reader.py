"""One csv reader (issue 10, item 8): every csv the tool reads goes through
inventory.sheets.csvread, so a demand file for the backtest, an import and a shipped standard
table accept the same files: UTF-8 (with or without BOM), UTF-16 with a BOM, Windows-1252,
comma, semicolon or tab separated. Each check compares the other form of a file with the
plain UTF-8 comma form read by Python's own csv module (the oracle)."""

from __future__ import annotations

import csv
import io
import re
from pathlib import Path

import numpy as np
import pytest

from inventory.bench import sizes
from inventory.ordering import backtest as bt
from inventory.sheets.csvread import csv_grid

PACKAGE = Path(__file__).resolve().parent.parent / "inventory"

WIDE = "month,OR-214,WP-32\n2024-01,2,0\n2024-02,,1\n2024-03,4,3\n"
LONG = "date,part,qty\n2024-01-03,OR-214,1\n2024-01-20,OR-214,2\n2024-03-31,WP-32,4\n"


def _variants(text: str) -> dict[str, bytes]:
    semi = text.replace(",", ";")
    return {
        "utf-8 bom": b"\xef\xbb\xbf" + text.encode("utf-8"),
        "utf-16 bom": text.encode("utf-16"),
        "semicolons": semi.encode("cp1252"),
        "tabs": text.replace(",", "\t").encode("utf-8"),
        "crlf": text.replace("\n", "\r\n").encode("utf-8"),
    }


@pytest.mark.parametrize("text", [WIDE, LONG], ids=["wide", "long"])
def test_backtest_reads_every_form_of_a_demand_file(tmp_path, text):
    plain = tmp_path / "plain.csv"
    plain.write_text(text, encoding="utf-8")
    expected = bt.read_demand_csv(plain)
    # the oracle for the reader itself: Python's csv module on the plain file
    assert csv_grid(plain)[0] == list(csv.reader(io.StringIO(text)))
    for name, data in _variants(text).items():
        path = tmp_path / f"{name.replace(' ', '_')}.csv"
        path.write_bytes(data)
        got = bt.read_demand_csv(path)
        assert got.names == expected.names, name
        np.testing.assert_array_equal(got.values, expected.values, err_msg=name)
        np.testing.assert_array_equal(got.periods, expected.periods, err_msg=name)


def test_demand_file_problems_stay_demand_file_errors(tmp_path):
    empty = tmp_path / "empty.csv"
    empty.write_bytes(b"")
    with pytest.raises(bt.DemandFileError, match="empty.csv: the file is empty"):
        bt.read_demand_csv(empty)
    short = tmp_path / "short.csv"
    short.write_text("date,part,qty\n2024-01-03,OR-214,1\n2024-01-04\n")
    with pytest.raises(bt.DemandFileError, match="short.csv:3:part: empty part") as err:
        bt.read_demand_csv(short)  # a line without its part and qty is reported, not skipped
    assert "short.csv:2" not in str(err.value)


def test_standard_tables_read_through_the_same_reader():
    # AS568 dash 214: ID 0.984 in, CS 0.139 in (SAE AS568 size table, as shipped in
    # inventory/standards/as568.csv and cited there)
    _, rows = sizes.read_standard_csv(sizes.AS568_FILE)
    row = next(r for r in rows if r.get("dash", r.get("size", "")).lstrip("-0") == "214")
    text = (PACKAGE / "standards" / sizes.AS568_FILE).read_text(encoding="utf-8")
    body = [ln for ln in text.splitlines() if ln.strip() and not ln.startswith("#")]
    oracle = list(csv.DictReader(body))
    assert list(rows) == oracle
    assert row in oracle


def test_no_other_csv_reader_in_the_package():
    """Reading csv (csv.reader, csv.DictReader, csv.Sniffer) happens in sheets/csvread.py
    only; writing (sheets/write.py) is not reading."""
    offenders = []
    for path in PACKAGE.rglob("*.py"):
        if path.relative_to(PACKAGE).as_posix() == "sheets/csvread.py":
            continue
        text = path.read_text(encoding="utf-8")
        if re.search(r"\bcsv\.(reader|DictReader|Sniffer)\b", text):
            offenders.append(path.relative_to(PACKAGE).as_posix())
    assert offenders == []
