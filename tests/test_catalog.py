"""Catalog load and export: lossless round trips, and every bad row reported at once with
its file, row, column, value and what was expected, with nothing written."""

from __future__ import annotations

import pytest
from sqlmodel import Session, select

from inventory.catalog.export import catalog_records, export_catalog
from inventory.catalog.load import load_catalog
from inventory.core import migrate
from inventory.core.db import make_engine, transaction
from inventory.core.errors import InventoryError
from inventory.core.tables import Part
from tests.conftest import TINY, write_catalog


def fresh(tmp_path, name):
    engine = make_engine(f"sqlite:///{tmp_path / name}", fresh=True)
    migrate.upgrade(engine)
    return engine


def test_round_trip_csv_and_xlsx_is_lossless(store, tmp_path):
    with Session(store) as s:
        original = catalog_records(s)
        export_catalog(s, tmp_path / "out")
        export_catalog(s, tmp_path / "out.xlsx")
    for source in (tmp_path / "out", tmp_path / "out.xlsx"):
        engine = fresh(tmp_path, f"{source.name}.db")
        with transaction(engine) as s:
            load_catalog(s, source)
        with Session(engine) as s:
            assert catalog_records(s) == original
    # and a second export of the reloaded csv is byte-identical
    engine = fresh(tmp_path, "again.db")
    with transaction(engine) as s:
        load_catalog(s, tmp_path / "out")
    with Session(engine) as s:
        export_catalog(s, tmp_path / "out2")
    for f in (tmp_path / "out").iterdir():
        assert f.read_bytes() == (tmp_path / "out2" / f.name).read_bytes(), f.name


def test_every_bad_row_reported_and_nothing_written(tmp_path):
    files = dict(TINY)
    files["parts.csv"] = (
        "code,kind,description,id_mm,od_mm,height_mm,cs_mm,material,hardness,volume_cm3,unit,standard,notes\n"
        "OR-214,o_ring,ok,24.99,,,3.53,NBR,70,,each,,\n"
        "OR-BAD,o-ring,bad size,-2,,,abc,NBR,70,,each,,\n"
        "WP-32,wiper,bad kind,31.2,42.1,10.5,,AU,90,,each,,\n"
        "OIL-5,oil,Fork oil,,,,,OIL,,,ml,,\n"
        "K-TST,kit,Test kit,,,,,,,,each,,\n"
    )
    files["supplier_items.csv"] = (
        "supplier,part,supplier_code,unit_cost,pack_size,min_order_qty,lead_time_days\n"
        "SUP-A,OR-999,x,0.25,10,10,\n"
    )
    folder = write_catalog(tmp_path / "bad", files)
    engine = fresh(tmp_path, "bad.db")
    with pytest.raises(InventoryError) as info:
        with transaction(engine) as s:
            load_catalog(s, folder)
    lines = info.value.lines()
    assert "parts.csv:D3 (id_mm): expected a number above 0, got '-2'" in lines
    assert "parts.csv:G3 (cs_mm): expected a number, got 'abc'" in lines
    assert ("parts.csv:B4 (kind): expected one of o_ring, x_ring, u_cup, dust_wiper, scraper_seal, "
            "foam_ring, glide_ring, top_out_bumper, volume_spacer, crush_washer, oil, grease, kit, "
            "got 'wiper'") in lines
    assert "supplier_items.csv:B2 (part): unknown part 'OR-999'" in lines
    assert any("WP-32" in ln or "kit_lines.csv" in ln for ln in lines)  # the kit line to WP-32
    with Session(engine) as s:
        assert s.exec(select(Part)).all() == []


def test_missing_required_column_names_what_was_found(tmp_path):
    files = {"parts.csv": "code,description\nX,y\n"}
    folder = write_catalog(tmp_path / "c", files)
    engine = fresh(tmp_path, "c.db")
    with pytest.raises(InventoryError, match=r"parts.csv:row 1: missing required column 'kind' "
                                             r"\(headers found: 'code', 'description'\)"):
        with transaction(engine) as s:
            load_catalog(s, folder)
