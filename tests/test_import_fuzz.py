"""Fuzzing the importer through its console entry point: random cell values and sheet shapes,
in xlsx and csv, for every kind. Whatever the file holds, no traceback reaches the user, the
exit status is 0 or 1, and a rejected file leaves the database exactly as it was."""

from __future__ import annotations

import uuid
from datetime import date, datetime

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from openpyxl import Workbook

from inventory.core.db import make_engine
from inventory.history.imports import KINDS, SCHEMAS
from tests.conftest import (
    IN_CI,
    PG_ADMIN_URL,
    _create_pg_db,
    _drop_pg_db,
    _pg_available,
    write_catalog,
)
from tests.test_import_support import cli, snapshot

FIELDS = sorted({c.name for s in SCHEMAS.values() for c in s.columns} | {
    "Job No.", "Date in", "Quantitiy", "Part no", "Total", "Fork model"})
TEXT = st.text(st.characters(blacklist_categories=("Cs", "Cc")), max_size=30)
RISKY = st.sampled_from(["=1+1", "+1", "-1", "@A1", "=SUM(A1:A9)", "total", "Grand total",
                         "next tue", "31/02/2024", "03/04/2024", "2024-13-40", "1e309", "NaN",
                         "XC-32", "OR-214", "K-TST", "lower leg", "air can", "0", "-0", "2,5",
                         "45000", "60", "2999-01-01", "12 h", "1.26in", "32 mm", "2026Q5"])
CELL = st.one_of(
    st.none(), TEXT, RISKY, st.integers(-10**12, 10**12), st.booleans(),
    st.floats(allow_nan=True, allow_infinity=True), st.dates(date(1901, 1, 1), date(2100, 1, 1)),
    st.datetimes(datetime(1901, 1, 1), datetime(2100, 1, 1)),
)
HEADER = st.one_of(st.sampled_from(FIELDS), TEXT, st.none())


@st.composite
def sheets(draw):
    width = draw(st.integers(0, 9))
    header = draw(st.lists(HEADER, min_size=width, max_size=width))
    rows = draw(st.lists(st.lists(CELL, min_size=0, max_size=width + 2), max_size=8))
    above = draw(st.lists(st.lists(CELL, max_size=3), max_size=2))
    return above + [header] + rows


@pytest.fixture(scope="module")
def shop(tmp_path_factory):
    folder = tmp_path_factory.mktemp("fuzz")
    yield _fill(str(folder / "shop.db"), folder)


@pytest.fixture(scope="module")
def pg_shop(tmp_path_factory):
    """The same shop on PostgreSQL, which enforces column sizes and integer ranges."""
    reason = _pg_available()
    if reason:
        if IN_CI:
            pytest.fail(f"CI=true and {reason}")
        pytest.skip(reason)
    name, url = _create_pg_db(PG_ADMIN_URL)
    try:
        yield _fill(url, tmp_path_factory.mktemp("pgfuzz"))
    finally:
        _drop_pg_db(PG_ADMIN_URL, name)


def _fill(db, folder):
    assert cli("--db", db, "init")[0] == 0
    assert cli("--db", db, "catalog", "load", str(write_catalog(folder / "cat")))[0] == 0
    assert cli("--db", db, "stock", "receive", "OR-214", "30", "--cost", "0.25")[0] == 0
    return db, folder


def _xlsx(path, grid, epoch_1904):
    wb = Workbook()
    ws = wb.active
    ws.title = "Sheet"
    if epoch_1904:
        wb.epoch = datetime(1904, 1, 1)
    for r, row in enumerate(grid, start=1):
        for c, v in enumerate(row, start=1):
            if v is not None:
                ws.cell(r, c, v)  # strings starting with "=" become formulas: fine
    wb.save(path)


def _csv(path, grid, encoding):
    text = "\n".join(",".join("" if v is None else str(v).replace(",", ";") for v in row)
                     for row in grid)
    path.write_bytes(text.encode(encoding, errors="replace"))


def _check(shop, path, kind, args):
    db, _ = shop
    engine = make_engine(db if "://" in db else f"sqlite:///{db}")
    before = snapshot(engine)
    code, out, err = cli("--db", db, "import", kind, str(path), *args)
    assert "Traceback" not in err and "Traceback" not in out
    assert "unexpected" not in err, err
    assert code in (0, 1), (code, err)
    if code != 0:
        assert err.startswith("error: "), err
        assert snapshot(engine) == before
    if "--apply" not in args:
        assert snapshot(engine) == before


@pytest.mark.slow
@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(grid=sheets(), kind=st.sampled_from(KINDS), apply=st.booleans(),
       epoch=st.booleans(), as_json=st.booleans())
def test_random_workbooks_never_crash(shop, grid, kind, apply, epoch, as_json):
    path = shop[1] / f"f-{uuid.uuid4().hex[:8]}.xlsx"
    try:
        _xlsx(path, grid, epoch)
    except Exception:  # openpyxl refuses some values (e.g. out-of-range dates): not our input
        return
    args = (["--apply"] if apply else []) + (["--json"] if as_json else [])
    _check(shop, path, kind, args)


@pytest.mark.slow
@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(grid=sheets(), kind=st.sampled_from(KINDS), apply=st.booleans(),
       encoding=st.sampled_from(["utf-8", "utf-8-sig", "cp1252", "utf-16", "latin-1"]))
def test_random_csv_files_never_crash(shop, grid, kind, apply, encoding):
    path = shop[1] / f"f-{uuid.uuid4().hex[:8]}.csv"
    _csv(path, grid, encoding)
    _check(shop, path, kind, ["--apply"] if apply else [])


@settings(max_examples=15, deadline=None)
@given(data=st.binary(max_size=600), suffix=st.sampled_from([".xlsx", ".csv", ".xls", ".ods"]))
def test_random_bytes_never_crash(shop, data, suffix):
    path = shop[1] / f"b-{uuid.uuid4().hex[:8]}{suffix}"
    path.write_bytes(data)
    _check(shop, path, "history", ["--apply"])


@pytest.mark.slow
@pytest.mark.postgres
@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(grid=sheets(), kind=st.sampled_from(KINDS))
def test_random_workbooks_never_crash_on_postgres(pg_shop, grid, kind):
    path = pg_shop[1] / f"f-{uuid.uuid4().hex[:8]}.xlsx"
    try:
        _xlsx(path, grid, False)
    except Exception:  # openpyxl refuses some values: not our input
        return
    _check(pg_shop, path, kind, ["--apply"])
