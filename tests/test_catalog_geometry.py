"""Seat geometry that cannot exist and tolerance classes of the wrong role are errors at
their cell when the catalog loads, and a failed "seat data" check in the fit code; nothing
falls back to nominal sizes (issue 11, item 6).

ISO 286-1 writes hole classes in upper case (H8: a bore) and shaft classes in lower case
(f7: a rod or stanchion) (REFERENCE.md 3, recalled from memory). A radial gland's depth is
``(bore - groove root) / 2`` for a piston and ``(groove - rod) / 2`` for a rod
(REFERENCE.md 2): a groove root of 22 mm in a 20 mm bore gives a negative depth and the
-184.6 % fill the issue quotes.
"""

from __future__ import annotations

import math

import pytest
from sqlmodel import Session, select

from inventory.bench.fit import Verdict, fit
from inventory.catalog.load import load_catalog
from inventory.core import migrate
from inventory.core.db import make_engine, transaction
from inventory.core.errors import InventoryError
from inventory.core.fits import check_role, fit_class_problems, seat_problems
from inventory.core.model import Gland, Medium, Motion, PartKind, PartSpec, SeatSpec
from inventory.core.tables import Seat
from tests.conftest import TINY, inv, write_catalog

SEAT_HEADER = ("fork,seat,position,part_kind,gland,motion,medium,qty_per_fork,rod_mm,bore_mm,"
               "groove_mm,groove_width_mm,housing_depth_mm,rod_fit,bore_fit,chamber_volume_cm3,"
               "piston_mm,travel_mm,set_pressure_bar,notes\n")


def _fresh(tmp_path, name):
    engine = make_engine(f"sqlite:///{tmp_path / name}", fresh=True)
    migrate.upgrade(engine)
    return engine


def _catalog(tmp_path, seats: str, parts: str | None = None):
    files = dict(TINY)
    files["seats.csv"] = SEAT_HEADER + seats
    if parts is not None:
        files["parts.csv"] = parts
    return write_catalog(tmp_path / "cat", files)


def test_impossible_seats_and_wrong_classes_are_errors_at_their_cell(tmp_path):
    folder = _catalog(tmp_path, (
        "XC-32,piston_ok,air_piston,o_ring,piston,dynamic,air,1,,29.60,26.35,2.25,,,H8,,,,,\n"
        "XC-32,piston_bad,air_piston,o_ring,piston,static,oil,1,,20.00,22.00,3.00,,,H8,,,,,\n"
        "XC-32,rod_bad,shaft_head,o_ring,rod,dynamic,oil,1,10.0,,9.5,3.0,,f7,,,,,,\n"
        "XC-32,wiper_f7,dust_wiper,dust_wiper,housing,dynamic,oil,2,32.0,42.0,,,10.0,f7,f7,,,,,\n"
        "XC-32,wiper_rod_h,dust_wiper,dust_wiper,housing,dynamic,oil,2,32.0,42.0,,,10.0,H8,H8,,,,,\n"
        "XC-32,wiper_z,dust_wiper,dust_wiper,housing,dynamic,oil,2,32.0,42.0,,,10.0,f7,Z9,,,,,\n"
        "XC-32,foam_in,foam_ring,foam_ring,housing,static,oil,2,32.0,31.0,,,5.0,,,,,,,\n"
    ), parts=TINY["parts.csv"] + "FR-BAD,foam_ring,Foam,40,38,5,,PU-FOAM,,,each,,\n")
    engine = _fresh(tmp_path, "bad.db")
    with pytest.raises(InventoryError) as info:
        with transaction(engine) as s:
            load_catalog(s, folder)
    lines = info.value.lines()
    assert ("seats.csv:K3 (groove_mm): expected a groove root diameter below the bore "
            "(bore_mm 20), got 22") in lines
    assert ("seats.csv:K4 (groove_mm): expected a groove diameter above the rod "
            "(rod_mm 10), got 9.5") in lines
    assert ("seats.csv:O5 (bore_fit): expected a hole tolerance class (E-H, grades 5-11, "
            "e.g. H8), got 'f7'") in lines
    assert ("seats.csv:N6 (rod_fit): expected a shaft tolerance class (e-h, grades 5-11, "
            "e.g. f7), got 'H8'") in lines
    assert ("seats.csv:O7 (bore_fit): expected a hole tolerance class (E-H, grades 5-11, "
            "e.g. H8), got 'Z9'") in lines
    assert ("seats.csv:J8 (bore_mm): expected a housing bore above the rod (rod_mm 32), "
            "got 31") in lines
    assert ("parts.csv:E6 (od_mm): expected an outside diameter above the inside diameter "
            "(id_mm 40), got 38") in lines
    assert not any("piston_ok" in ln or ":K2 " in ln for ln in lines)
    with Session(engine) as s:
        assert s.exec(select(Seat)).all() == []  # nothing written


def test_the_cli_prints_one_line_per_bad_cell(tmp_path, monkeypatch, capsys):
    folder = _catalog(tmp_path, (
        "XC-32,piston_bad,air_piston,o_ring,piston,static,oil,1,,20.00,22.00,3.00,,,f7,,,,,\n"))
    db = f"sqlite:///{tmp_path / 'cli.db'}"
    assert inv(monkeypatch, capsys, "--db", db, "init")[0] == 0
    code, out, err = inv(monkeypatch, capsys, "--db", db, "catalog", "load", str(folder))
    assert code == 1
    lines = err.strip().splitlines()
    assert any(ln.endswith("seats.csv:K2 (groove_mm): expected a groove root diameter below "
                           "the bore (bore_mm 20), got 22") for ln in lines), lines
    assert any(ln.endswith("seats.csv:O2 (bore_fit): expected a hole tolerance class (E-H, "
                           "grades 5-11, e.g. H8), got 'f7'") for ln in lines), lines


def test_the_fit_code_refuses_the_same_seats_without_numbers():
    ring = PartSpec("R", PartKind.O_RING, id_mm=18.0, cs_mm=2.0)
    seat = SeatSpec("F", "s", "p", PartKind.O_RING, Gland.PISTON, Motion.STATIC, Medium.OIL,
                    bore_mm=20.0, groove_mm=22.0, groove_width_mm=3.0)
    result = fit(ring, seat)
    # before: depth (20 - 22) / 2 = -1 mm gave a negative fill that "passed"
    depth = (20.0 - 22.0) / 2
    assert math.pi * 2.0 ** 2 / 4 / (3.0 * depth) * 100 < 0
    assert result.verdict == Verdict.FAIL
    assert [c.name for c in result.checks] == ["kind", "seat data"]
    assert "groove_mm: expected a groove root diameter below the bore" in result.checks[1].allowed
    # a shaft class on a bore is refused, not used as the bore's limits
    wiper = PartSpec("W", PartKind.DUST_WIPER, id_mm=31.0, od_mm=42.1, height_mm=10.0)
    housing = SeatSpec("F", "w", "dust_wiper", PartKind.DUST_WIPER, Gland.HOUSING,
                       Motion.DYNAMIC, Medium.OIL, rod_mm=32.0, bore_mm=42.0,
                       housing_depth_mm=10.0, bore_fit="f7")
    checks = fit(wiper, housing).checks
    assert checks[1].name == "seat data" and "bore_fit" in checks[1].allowed
    # the right class gives ISO 286 limits: 42 H8 = 42.000-42.039 (IT8 39 um over 30-50 mm,
    # REFERENCE.md 3)
    ok = fit(wiper, SeatSpec("F", "w", "dust_wiper", PartKind.DUST_WIPER, Gland.HOUSING,
                             Motion.DYNAMIC, Medium.OIL, rod_mm=32.0, bore_mm=42.0,
                             housing_depth_mm=10.0, bore_fit="H8"))
    press = {c.name: c for c in ok.checks}["press fit at largest bore"]
    assert press.value == pytest.approx((42.1 - 42.039) / 42.0 * 100)
    # a class the shipped ISO 286 table does not cover at that size is refused too
    big = SeatSpec("F", "w", "dust_wiper", PartKind.DUST_WIPER, Gland.HOUSING, Motion.DYNAMIC,
                   Medium.OIL, rod_mm=130.0, bore_mm=140.0, housing_depth_mm=10.0,
                   bore_fit="H8")
    big_wiper = PartSpec("W2", PartKind.DUST_WIPER, id_mm=129.0, od_mm=140.2, height_mm=10.0)
    checks = fit(big_wiper, big).checks
    assert checks[1].name == "seat data" and "outside the ISO 286 table" in checks[1].allowed


def test_role_rules():
    assert check_role("H8", "hole") == ("H", 8)
    assert check_role(" f7 ", "shaft") == ("f", 7)
    for fit_, role in (("f7", "hole"), ("H8", "shaft"), ("K6", "hole"), ("h4", "shaft")):
        with pytest.raises(ValueError):
            check_role(fit_, role)
    seat = SeatSpec("F", "s", "p", PartKind.DUST_WIPER, Gland.HOUSING, rod_mm=32.0,
                    bore_mm=42.0, rod_fit="f7", bore_fit="H8")
    assert seat_problems(seat) == [] and fit_class_problems(seat) == []
