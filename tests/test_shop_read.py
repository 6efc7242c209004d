"""The bench reads the catalog by SQL straight into arrays (issue 10 item 6): the arrays equal
the ones built from records (the reference path, ``columns_from_specs`` over ``part_spec``
of each ORM row), no ORM object is made, matches come out the same, and stock is read only
for the candidates shown."""

from __future__ import annotations

from datetime import date

import numpy as np
import pytest
from sqlalchemy import event, text
from sqlmodel import Session, select

from inventory.bench import service as svc
from inventory.bench.fit_columns import _COLUMN_NAMES, columns_from_specs
from inventory.bench.matching import MatchQuery, PartArrays
from inventory.bench.shop_read import read_part_arrays
from inventory.core.convert import part_spec
from inventory.core.db import read_transaction, transaction
from inventory.core.model import PartKind
from inventory.core.tables import Part
from inventory.stock import ledger
from tests.support.synthetic import synthetic_parts

N = 3_000


@pytest.fixture
def catalog(store):
    """The tiny catalog plus N synthetic parts (rings with and without standard sizes, every
    kind, missing dimensions, unknown materials), some consumables, stock on a few."""
    parts = synthetic_parts(N, seed=5, scale=25.0)
    # a ring naming a real standard size gets that size's table tolerances
    rows = [dict(code=p.code, kind=str(p.kind), description=f"synthetic {i}", id_mm=p.id_mm,
                 od_mm=p.od_mm, height_mm=p.height_mm, cs_mm=p.cs_mm, material=p.material,
                 hardness=p.hardness_shore_a, volume_cm3=p.volume_cm3, unit="each",
                 standard=("AS568-214" if p.standard and i % 2 else p.standard), notes="")
            for i, p in enumerate(parts)]
    rows.append(dict(code="OIL-X", kind="oil", description="oil", id_mm=None, od_mm=None,
                     height_mm=None, cs_mm=None, material=None, hardness=None,
                     volume_cm3=None, unit="ml", standard=None, notes=""))
    with store.begin() as con:
        con.execute(text(
            "INSERT INTO part (code, kind, description, id_mm, od_mm, height_mm, cs_mm, "
            "material, hardness, volume_cm3, unit, standard, notes) VALUES (:code, :kind, "
            ":description, :id_mm, :od_mm, :height_mm, :cs_mm, :material, :hardness, "
            ":volume_cm3, :unit, :standard, :notes)"), rows)
    with transaction(store) as s:
        ledger.receive(s, ledger.Receipt(
            "OR-214", 7, "0.25", lot="A", cured="2025Q1", received=date(2025, 5, 1)))
    return store


def _reference(session: Session):
    specs = [part_spec(p) for p in session.exec(select(Part).order_by(Part.code))
             if PartKind(p.kind) not in svc.NOT_BENCH_KINDS]
    return specs, columns_from_specs(specs)


def test_sql_arrays_equal_the_arrays_built_from_records(catalog):
    with read_transaction(catalog) as s:
        rows, arrays = read_part_arrays(s, exclude=svc.NOT_BENCH_KINDS)
        specs, ref = _reference(s)
    assert list(arrays.codes) == [p.code for p in specs]
    assert "OIL-X" not in set(arrays.codes)
    for name in _COLUMN_NAMES:
        ours, theirs = getattr(arrays.cols, name), getattr(ref, name)
        assert ours.dtype.kind == theirs.dtype.kind, name
        if ours.dtype.kind == "f":
            # one vectorised power over the column against one per ring: the last bit may
            # differ (SIMD and scalar pow round differently); NaN where the reference has NaN
            np.testing.assert_allclose(ours, theirs, rtol=1e-14, atol=0, err_msg=name)
        else:
            np.testing.assert_array_equal(ours, theirs, err_msg=name)
    # the records made on demand are the records of the reference path
    for i in (0, 1, len(specs) // 2, len(specs) - 1):
        assert rows[i] == specs[i]
    assert list(rows) == specs


def test_lookup_makes_no_orm_objects_and_ranks_the_same(catalog):
    loaded: list[str] = []

    def on_load(target, ctx):
        loaded.append(target.code)

    event.listen(Part, "load", on_load)
    try:
        with read_transaction(catalog) as s:
            shop = svc.load_shop(s)
            assert loaded == []  # the whole catalog read without one ORM object
            q = MatchQuery(id_mm=24.99, cs_mm=3.53)
            result = svc.run_match(shop, svc.MatchRequest(q, standard=False))
            # the candidates' stock is looked up per candidate shown, and only then
            assert set(loaded) <= {r["part"] for r in result.rows}
            # the reference: the same lookup over the catalog read as records
            specs, _ = _reference(s)
            before = svc.Shop(tuple(specs), PartArrays.from_specs(specs),
                              svc.StockOnDemand(s, {p.code: p for p in specs}, shop.on),
                              shop.on)
            expected = svc.run_match(before, svc.MatchRequest(q, standard=False))
    finally:
        event.remove(Part, "load", on_load)
    assert result.rows == expected.rows and len(result.rows) == 6
    assert [r["on_hand"] for r in result.rows if r["part"] == "OR-214"] == [7]


def test_stock_is_read_for_the_candidates_shown_only(catalog):
    statements: list[str] = []

    def count(conn, cursor, statement, *args):
        statements.append(statement)

    with read_transaction(catalog) as s:
        shop = svc.load_shop(s)
        event.listen(catalog, "before_cursor_execute", count)
        try:
            result = svc.run_match(shop, svc.MatchRequest(MatchQuery(id_mm=24.99, cs_mm=3.53),
                                                          standard=False))
        finally:
            event.remove(catalog, "before_cursor_execute", count)
    shown = {r["part"] for r in result.rows}
    # one stock read per candidate shown at most, never one per part in the catalog
    assert 0 < len(statements) <= 3 * len(shown) < N


def test_bench_stock_read_equals_the_ledgers_sums(catalog):
    """The bench sums stock with its own SQL (it sits below the stock package); the oracle
    is the stock package's reader, :func:`inventory.stock.ledger.on_hand`, and the count
    booked here by hand (7 + 5 received, 9 issued oldest cure first)."""
    from inventory.bench.stock_read import stock_infos

    with transaction(catalog) as s:
        ledger.receive(s, ledger.Receipt(
            "OR-214", 5, "0.30", lot="B", cured="2024Q3", received=date(2025, 6, 1)))
        ledger.issue(s, ledger.Issue("OR-214", 9))  # lot B (older cure) first, then 4 of lot A
    with read_transaction(catalog) as s:
        specs = {p.code: p for p in _reference(s)[0]}
        ours = stock_infos(s, specs, on=date(2026, 1, 1))
        lines = [line for line in ledger.on_hand(s, by_lot=True) if line.on_hand > 0]
        one = stock_infos(s, specs, on=date(2026, 1, 1), codes=["OR-214"])
    theirs: dict[str, int] = {}
    for line in lines:
        theirs[line.part] = theirs.get(line.part, 0) + line.on_hand
    assert {code: info.on_hand for code, info in ours.items()} == theirs
    assert ours["OR-214"].on_hand == 7 + 5 - 9
    assert ours["OR-214"].locations == (("MAIN", 3),)
    assert one == {"OR-214": ours["OR-214"]}
