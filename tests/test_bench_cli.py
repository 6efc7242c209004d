"""The bench commands as a user types them: match, fit, compat, parts find.

A tiny shop is built inline (one fork family with a seat of every kind, a dozen parts, two
lots). Outside references: the AS568 size table (REFERENCE.md 1.2: -214 = 24.99 x 3.53 mm,
0.984 x 0.139 in; recalled from memory), the worked gland of REFERENCE.md 2 (computed again
here by hand, the stretched cross-section from numpy.roots), ISO 2230 group B (NBR: 7 years,
REFERENCE.md 5), REFERENCE.md 6 (EPDM never in mineral oil) and the scalar fit() of the
pure core (every workbook cell must equal it).
"""

from __future__ import annotations

import json
import math
import sys
from datetime import date
from pathlib import Path

import numpy as np
import pytest
from openpyxl import load_workbook

from inventory.bench.fit import CAUTION, fit
from inventory.bench.matching import PartArrays
from inventory.catalog.load import load_catalog
from inventory.cli import common
from inventory.cli.main import run
from inventory.core import migrate
from inventory.core.convert import all_parts, all_seats
from inventory.core.db import dispose_all, make_engine, transaction
from inventory.demo.tour import bench_tour
from inventory.stock import ledger

CATALOG = {
    "locations.csv": "code,description\nMAIN,Store room\nBENCH,Bench drawer\n",
    "parts.csv": (
        "code,kind,description,id_mm,od_mm,height_mm,cs_mm,material,hardness,volume_cm3,"
        "unit,standard,notes\n"
        "OR-214-NBR,o_ring,O-ring 24.99 x 3.53 NBR 70,24.99,,,3.53,NBR,70,,each,AS568-214,\n"
        "OR-214-EPDM,o_ring,O-ring 24.99 x 3.53 EPDM 70,24.99,,,3.53,EPDM,70,,each,AS568-214,\n"
        "OR-222-NBR,o_ring,O-ring 37.69 x 3.53 NBR 70,37.69,,,3.53,NBR,70,,each,AS568-222,\n"
        "XR-214,x_ring,X-ring 24.99 x 3.53 NBR 80,24.99,,,3.53,NBR,80,,each,,\n"
        "UC-10-16,u_cup,U-cup rod seal 10 mm shaft,9.60,16.30,4.60,,AU,93,,each,,\n"
        "DW-32-42,dust_wiper,Dust wiper 32 mm stanchion,31.20,42.10,10.50,,AU,90,,each,,\n"
        "DW-34-44,dust_wiper,Dust wiper 34 mm stanchion,33.20,44.15,10.50,,AU,90,,each,,\n"
        "SS-10-14,scraper_seal,Scraper seal 10 mm air shaft,9.50,14.10,2.80,,AU,92,,each,,\n"
        "FR-32-05,foam_ring,Foam oil ring 32 mm stanchion,32.0,38.5,5.0,,PU-FOAM,,,each,,\n"
        "GR-31.2,glide_ring,Glide ring 31.2 mm air piston,28.10,31.10,5.50,,PTFE,,,each,,\n"
        "TB-10-15,top_out_bumper,Top-out bumper 10 mm shaft,9.60,15.00,6.00,,AU,85,,each,,\n"
        "VS-31-10,volume_spacer,Volume spacer 10 cm3,,31.0,15.0,,POM,,10,each,,\n"
        "CW-8-12,crush_washer,Crush washer 8 mm,8.10,12.00,1.00,,CU,,,each,,\n"
        "OIL-5,oil,Fork oil 5wt,,,,,,,,ml,,\n"
    ),
    "fork_families.csv": (
        "code,description,stanchion_mm,travel_min_mm,travel_max_mm,spring,year_from,year_to\n"
        "T-32,Test fork,32,100,120,air_coil_negative,2020,\n"
    ),
    "seats.csv": (
        "fork,seat,position,part_kind,gland,motion,medium,qty_per_fork,rod_mm,bore_mm,"
        "groove_mm,groove_width_mm,housing_depth_mm,rod_fit,bore_fit,chamber_volume_cm3,"
        "piston_mm,travel_mm,set_pressure_bar,notes\n"
        # the worked gland of REFERENCE.md 2: bore 31.20, groove 25.50, width 4.80
        "T-32,top_cap,top_cap,o_ring,piston,static,oil,1,,31.20,25.50,4.80,,,H8,,,,,\n"
        "T-32,air_piston_seal,air_piston,x_ring,piston,dynamic,air,1,,31.25,24.85,4.80,,,H8,"
        ",,,,\n"
        "T-32,damper_shaft_seal,damper_seal_head,u_cup,rod,dynamic,oil,1,10.0,,16.0,5.0,,f7,"
        ",,,,,\n"
        "T-32,dust_wiper,dust_wiper,dust_wiper,housing,dynamic,oil,2,32.0,42.0,,,10.0,f7,H8,,,,,\n"
        "T-32,air_head_scraper,air_shaft_head,scraper_seal,rod,dynamic,air,1,10.0,,14.0,3.0,,"
        "f7,,,,,,\n"
        "T-32,foam_ring,foam_ring,foam_ring,housing,static,oil,2,32.0,38.5,,,5.5,,,,,,,\n"
        "T-32,air_piston_guide,air_piston,glide_ring,piston,dynamic,air,1,,31.20,28.10,5.80,,,"
        "H8,,,,,\n"
        "T-32,top_out,damper_top_out,top_out_bumper,shaft,static,oil,1,10.0,16.0,,,6.5,,,,,,,\n"
        # the spacer example of REFERENCE.md 9: V0 160 cm3, piston 32 mm, travel 150, 5.5 bar
        "T-32,air_chamber,air_chamber,volume_spacer,chamber,static,air,1,,31.6,,,40.0,,,160,"
        "32,150,5.5,\n"
        "T-32,bottom_bolt,bottom_bolt,crush_washer,face,static,oil,2,8.0,13.0,,,,,,,,,,\n"
    ),
}
SEAT_PART = {  # a part of each seat's kind
    "top_cap": "OR-214-NBR", "air_piston_seal": "XR-214", "damper_shaft_seal": "UC-10-16",
    "dust_wiper": "DW-32-42", "air_head_scraper": "SS-10-14", "foam_ring": "FR-32-05",
    "air_piston_guide": "GR-31.2", "top_out": "TB-10-15", "air_chamber": "VS-31-10",
    "bottom_bolt": "CW-8-12",
}
RECENT = f"{date.today().year}Q1"


@pytest.fixture(scope="module")
def shop(tmp_path_factory) -> str:
    """The tiny shop on SQLite: catalog, an old NBR lot (cured 2001Q1) at MAIN and a fresh
    one at BENCH, and EPDM rings at MAIN."""
    folder = tmp_path_factory.mktemp("bench")
    for name, text in CATALOG.items():
        (folder / "cat").mkdir(exist_ok=True)
        (folder / "cat" / name).write_text(text, encoding="utf-8")
    db = str(folder / "shop.db")
    engine = make_engine(f"sqlite:///{db}", fresh=True)
    migrate.upgrade(engine)
    with transaction(engine) as s:
        load_catalog(s, folder / "cat")
        ledger.receive(s, ledger.Receipt("OR-214-NBR", 10, "0.25", lot="OLD", cured="2001Q1"))
        ledger.receive(s, ledger.Receipt("OR-214-NBR", 5, "0.25", lot="NEW", cured=RECENT, location="BENCH"))
        ledger.receive(s, ledger.Receipt("OR-214-EPDM", 4, "0.30", lot="E1", cured=RECENT))
        ledger.receive(s, ledger.Receipt("DW-32-42", 2, "6.50", lot="W1", cured=RECENT))
    engine.dispose()
    yield db
    dispose_all()


def inv(monkeypatch, capsys, *args: str) -> tuple[int, str, str]:
    monkeypatch.setattr(sys, "argv", ["inventory", *args])
    monkeypatch.setattr(common.console, "width", 220)
    code = 0
    try:
        run()
    except SystemExit as exc:
        code = exc.code or 0
    out = capsys.readouterr()
    return code, out.out, out.err


def ok_json(monkeypatch, capsys, shop, *args):
    code, out, err = inv(monkeypatch, capsys, "--db", shop, *args, "--json")
    assert code == 0, err
    return json.loads(out)


# ------------------------------------------------------------------------------ match

CONTRACT = {"source", "kind", "id_mm", "od_mm", "height_mm", "cs_mm", "score"}


def test_match_puts_as568_214_first_among_standard_sizes(shop, monkeypatch, capsys):
    # AS568-214 is 24.99 x 3.53 mm (REFERENCE.md 1.2, recalled from memory)
    data = ok_json(monkeypatch, capsys, shop, "match", "--id", "24.99", "--cs", "3.53")
    cands = data["candidates"]
    standard = [c for c in cands if c["source"] == "standard"]
    assert standard[0]["designation"] == "AS568-214"
    assert standard[0]["status"] == "orderable, not stocked"
    assert standard[0]["od_mm"] is None and standard[0]["height_mm"] is None  # absent: null
    assert "on_hand" not in standard[0]
    assert sorted(standard[0]["stocked_as"]) == ["OR-214-EPDM", "OR-214-NBR"]
    for c in cands:
        assert CONTRACT <= set(c) and ("part" in c) != ("designation" in c)
    stock = {c["part"]: c for c in cands if c["source"] == "stock"}
    nbr = stock["OR-214-NBR"]
    assert nbr["on_hand"] == 15 and nbr["location"] == "MAIN, BENCH"
    assert nbr["od_mm"] is None and nbr["cs_mm"] == 3.53  # as recorded
    # scores ascending; a metric neighbour like ISO3601 25x3.55 comes later, the cross-
    # section driving its rank. EPDM does not suit the mineral oil O-rings usually work in
    # (REFERENCE.md 6): marked and ranked after the others although its size is exact
    suited = [c for c in cands if c.get("material_status") != "fail"]
    assert [c["score"] for c in suited] == sorted(c["score"] for c in suited)
    epdm = stock["OR-214-EPDM"]
    assert epdm["score"] == 0.0 and cands.index(epdm) == len(suited)
    assert epdm["material_note"] == "EPDM: poor in mineral oil, the usual medium of O-rings"
    assert "material_note" not in nbr and nbr["material_status"] == "pass"
    assert list(data)[-1] == "caution" and data["caution"] == CAUTION


def test_inch_readings_find_the_same_ring(shop, monkeypatch, capsys):
    # AS568-214 in inches: 0.984 x 0.139 in (REFERENCE.md 1.2, recalled from memory)
    data = ok_json(monkeypatch, capsys, shop, "match", "--id", "0.984in", "--cs", ".139in")
    assert next(c for c in data["candidates"] if c["source"] == "standard")[
        "designation"] == "AS568-214"
    # with --unit in, bare numbers are inches and the table shows inches
    code, out, err = inv(monkeypatch, capsys, "--db", shop, "match", "--id", "0.984", "--cs",
                         "0.139", "--unit", "in", "--limit", "2")
    assert code == 0, err
    assert "0.984 x 0.139" in out and "size in" in out


def test_match_table_names_the_driving_dimension_and_ends_with_the_caution(
        shop, monkeypatch, capsys):
    code, out, err = inv(monkeypatch, capsys, "--db", shop, "match", "--id", "31.6", "--cs",
                         "3.50", "--kind", "o_ring")
    assert code == 0, err
    assert "driven by" in out
    # ISO 3601 31.5 x 3.55 read as 31.6 x 3.50: cs part 0.05 / (0.15 + 0.015 x 3.50) = 0.25
    # beats id part 0.1 / (0.15 + 0.015 x 31.6) = 0.16 (tolerance of MatchTolerance)
    line = next(ln for ln in out.splitlines() if "ISO3601 31.5x3.55" in ln)
    assert f"cs {0.05 / (0.15 + 0.015 * 3.50):.2f}" in line
    assert out.rstrip("\n").splitlines()[-1] == CAUTION


def test_match_with_a_seat_gives_verdicts_and_flags_old_lots(shop, monkeypatch, capsys):
    data = ok_json(monkeypatch, capsys, shop, "match", "--id", "25.1", "--cs", "3.49",
                   "--fork", "T-32", "--seat", "top_cap")
    stock = {c["part"]: c for c in data["candidates"] if c["source"] == "stock"}
    # the worked gland passes at nominal (REFERENCE.md 2) but its minimum squeeze over the
    # ring's and the seat's tolerances is under 15 % (tests/test_fit_limits.py): marginal;
    # EPDM in an oil-wetted seat fails (REFERENCE.md 6) and ranks after it
    assert stock["OR-214-NBR"]["verdict"] == "marginal"
    assert stock["OR-214-EPDM"]["verdict"] == "fail"
    order = ["pass", "marginal", "fail", "n/a"]
    ranks = [order.index(c["verdict"]) for c in data["candidates"]]
    assert ranks == sorted(ranks)  # pass before marginal before fail, then score
    assert data["seat"] == {"fork": "T-32", "seat": "top_cap"}
    # ISO 2230 group B (NBR): 7 years from the end of 2001Q1 is long past; the fresh lot is
    # not (REFERENCE.md 5)
    assert stock["OR-214-NBR"]["past_storage"] is True
    assert stock["OR-214-NBR"]["past_storage_units"] == 10
    assert stock["OR-214-EPDM"]["past_storage"] is False
    for c in data["candidates"]:
        assert c["verdict"] in ("pass", "marginal", "fail", "n/a")


def test_hardness_band_is_an_option(shop, monkeypatch, capsys):
    base = ["match", "--id", "24.99", "--cs", "3.53", "--fork", "T-32", "--seat", "top_cap",
            "--hardness", "70", "--no-standard"]
    rows = {c["part"]: c for c in ok_json(monkeypatch, capsys, shop, *base)["candidates"]}
    # X-ring at 80 Shore A against a 70 reference: outside +/-5 (REFERENCE.md 6, CP)
    assert rows["XR-214"]["hardness_ok"] is False and rows["XR-214"]["verdict"] == "marginal"
    assert rows["OR-214-NBR"]["hardness_ok"] is True
    wide = {c["part"]: c for c in ok_json(monkeypatch, capsys, shop, *base,
                                          "--hardness-tol", "10")["candidates"]}
    assert wide["XR-214"]["hardness_ok"] is True
    # the verdict with the wide band is the geometry's alone (marginal over the tolerances
    # in this seat); a static face gland with room to spare would pass
    assert wide["XR-214"]["verdict"] == "marginal"


def test_seat_without_dimensions_lists_what_fits(shop, monkeypatch, capsys):
    data = ok_json(monkeypatch, capsys, shop, "match", "--fork", "T-32", "--seat", "top_cap")
    assert data["mode"] == "fitting"
    verdicts = {c.get("part") or c["designation"]: c["verdict"] for c in data["candidates"]}
    # marginal over the tolerances (see above); EPDM fails and is not listed
    assert verdicts["OR-214-NBR"] == "marginal" and "OR-214-EPDM" not in verdicts
    assert verdicts["AS568-214"] == "marginal"
    assert "OR-222-NBR" not in verdicts  # 37.69 mm inside on a 25.5 mm groove
    engine = make_engine(f"sqlite:///{shop}")
    from sqlmodel import Session

    with Session(engine) as s:
        specs = {p.code: p for p in all_parts(s)}
        seat = next(x for x in all_seats(s) if x.seat == "top_cap")
    for code, verdict in verdicts.items():
        if code in specs:
            assert str(fit(specs[code], seat).verdict) == verdict


# -------------------------------------------------------------------------------- fit

def test_hand_worked_gland_through_the_cli(shop, monkeypatch, capsys):
    """REFERENCE.md 2 worked check: 24.99 x 3.53 in a piston groove d3 25.50, bore 31.20,
    width 4.80: stretch 2.04 %, d2' 3.501, squeeze 18.6 %, fill 70.4 % (x 1.05 swell)."""
    data = ok_json(monkeypatch, capsys, shop, "fit", "OR-214-NBR", "--fork", "T-32",
                   "--seat", "top_cap")
    checks = {c["name"]: c for c in data["checks"]}
    d1, d2, d3, bore, width = 24.99, 3.53, 25.50, 31.20, 4.80
    # by hand: the constant-volume cubic d2'^2 (d3 + d2') = d2^2 (d1 + d2)
    roots = np.roots([1.0, d3, 0.0, -(d2 ** 2) * (d1 + d2)])
    d2s = next(r.real for r in roots if abs(r.imag) < 1e-12 and r.real > 0)
    t = (bore - d3) / 2
    assert checks["installed stretch"]["value"] == pytest.approx((d3 - d1) / d1 * 100)
    assert round(checks["installed stretch"]["value"], 2) == 2.04
    assert checks["squeeze"]["value"] == pytest.approx((d2s - t) / d2s * 100)
    assert round(checks["squeeze"]["value"], 1) == 18.6
    fill = math.pi * d2s ** 2 / 4 / (width * t) * 100
    assert round(fill, 1) == 70.4
    assert checks["gland fill"]["value"] == pytest.approx(fill * 1.05)
    assert checks["squeeze"]["allowed"] == "15 to 30 %"  # static range, REFERENCE.md 2
    # REFERENCE.md 2 calls it fine for static use at nominal sizes; over the ring's and the
    # H8 / h9 seat tolerances the minimum squeeze drops under 15 %: marginal, minimum drives
    assert checks["squeeze"]["status"] == "marginal"
    assert checks["squeeze"]["low"] < 15 < checks["squeeze"]["value"]
    assert checks["squeeze"]["driver"] == "minimum"
    assert data["verdict"] == "marginal"
    assert all(set(c) >= {"name", "value", "allowed", "status", "source"}
               for c in data["checks"])
    assert list(data)[-1] == "caution" and data["caution"] == CAUTION


@pytest.mark.parametrize("seat", sorted(SEAT_PART))
def test_fit_gives_a_verdict_with_numbers_for_every_seat_kind(shop, monkeypatch, capsys,
                                                              seat):
    data = ok_json(monkeypatch, capsys, shop, "fit", SEAT_PART[seat], "--fork", "T-32",
                   "--seat", seat)
    statuses = [c["status"] for c in data["checks"]]
    order = ["pass", "marginal", "fail"]
    assert data["verdict"] == max(statuses, key=order.index)  # the worst check
    numeric = [c for c in data["checks"] if isinstance(c["value"], float)
               and c["name"] not in ("kind", "material")]
    assert numeric, data
    assert all(c["allowed"] and c["source"] for c in data["checks"])
    assert "seat data" not in [c["name"] for c in data["checks"]]
    code, out, err = inv(monkeypatch, capsys, "--db", shop, "fit", SEAT_PART[seat], "--fork",
                         "T-32", "--seat", seat)
    assert code == 0 and f"verdict: {data['verdict'].upper()}" in out
    assert out.rstrip("\n").splitlines()[-1] == CAUTION


def test_spacer_end_pressure_through_the_cli(shop, monkeypatch, capsys):
    # REFERENCE.md 9 example: 10 cm3 spacer, V0 160, piston 32 mm, travel 150, 5.5 bar:
    # by hand V1 = 150, V2 = 150 - pi 3.2^2 / 4 x 15 = 29.36 cm3, p2 = 6.51325 x V1/V2 - 1.01325
    data = ok_json(monkeypatch, capsys, shop, "fit", "VS-31-10", "--fork", "T-32", "--seat",
                   "air_chamber")
    checks = {c["name"]: c for c in data["checks"]}
    v2 = 150.0 - math.pi * 3.2 ** 2 / 4 * 15.0
    assert checks["compression ratio"]["value"] == pytest.approx(150.0 / v2)
    assert checks["end pressure n=1"]["value"] == pytest.approx(
        (5.5 + 1.01325) * 150.0 / v2 - 1.01325)
    assert round(checks["end pressure n=1"]["value"], 1) == 32.3  # the table's 32.3 bar


def test_fit_alone_lists_every_seat_where_the_part_fits(shop, monkeypatch, capsys):
    data = ok_json(monkeypatch, capsys, shop, "fit", "OR-214-NBR")
    seats = {(r["fork"], r["seat"]): r["verdict"] for r in data["seats"]}
    assert seats[("T-32", "top_cap")] == "marginal"  # over the tolerances, see above
    # an O-ring may stand in an X-ring seat only as marginal (common practice)
    assert seats.get(("T-32", "air_piston_seal")) == "marginal"
    assert all(v in ("pass", "marginal") for v in seats.values())
    assert data["caution"] == CAUTION and all("checks" in r for r in data["seats"])
    everything = ok_json(monkeypatch, capsys, shop, "fit", "OR-214-EPDM", "--all")
    verdicts = {r["seat"]: r["verdict"] for r in everything["seats"]}
    assert verdicts["top_cap"] == "fail"  # EPDM in oil (REFERENCE.md 6)


def test_fit_takes_a_standard_designation(shop, monkeypatch, capsys):
    data = ok_json(monkeypatch, capsys, shop, "fit", "as568 214", "--fork", "T-32", "--seat",
                   "top_cap")
    assert data["part"] == "AS568-214" and data["verdict"] == "marginal"
    material = next(c for c in data["checks"] if c["name"] == "material")
    assert material["value"] == "any (standard size)"


# ----------------------------------------------------------------------------- compat

PALETTE_FILLS = {"fits": "9FD8B4", "check": "F7D98B", "no": "E9A3A0", None: "EFEFEF"}


def test_compat_workbook_matrix_legend_and_frozen_panes(shop, tmp_path, monkeypatch, capsys):
    path = tmp_path / "compat.xlsx"
    code, out, err = inv(monkeypatch, capsys, "--db", shop, "compat", "--xlsx", str(path))
    assert code == 0, err
    assert out.rstrip("\n").splitlines()[-1] == CAUTION
    wb = load_workbook(path)
    assert wb.sheetnames[0] == "Legend"
    assert {"O-ring", "X-ring", "Glide ring", "Scraper seal", "Volume spacer"} <= set(
        wb.sheetnames)
    legend = wb["Legend"]
    labels = {legend.cell(r, 1).value for r in range(5, 9)}
    assert labels == {"fits", "check", "no", "n/a"}
    engine = make_engine(f"sqlite:///{shop}")
    from sqlmodel import Session

    with Session(engine) as s:
        specs = {p.code: p for p in all_parts(s)}
        seats = {x.seat: x for x in all_seats(s)}
    checked = 0
    for name in wb.sheetnames[1:]:
        ws = wb[name]
        assert ws.freeze_panes == "F3"
        assert ws.cell(1, 1).value == "fork"
        parts = [ws.cell(1, c).value for c in range(6, ws.max_column + 1)
                 if ws.cell(1, c).value]
        r = 3
        while ws.cell(r, 1).value == "T-32":
            seat = seats[ws.cell(r, 2).value]
            for j, code_ in enumerate(parts):
                cell = ws.cell(r, 6 + j)
                assert cell.fill.fgColor.rgb.endswith(PALETTE_FILLS[cell.value])
                if cell.value is not None:  # computed by the fit rules: equals fit()
                    expected = {"pass": "fits", "marginal": "check", "fail": "no"}[
                        str(fit(specs[code_], seat).verdict)]
                    assert cell.value == expected
                    checked += 1
            r += 1
        assert any(ws.cell(rr, 2).value == "Legend" for rr in range(r, r + 4))
    assert checked >= 15


def test_compat_json_and_kind_filter(shop, monkeypatch, capsys):
    data = ok_json(monkeypatch, capsys, shop, "compat", "--kind", "glide-ring")
    (block,) = data["kinds"]
    assert block["kind"] == "glide_ring"
    assert block["verdicts"] == [["pass"]]  # GR-31.2 in its groove (tests/test_fit_glide.py)
    assert data["caution"] == CAUTION


# ---------------------------------------------------------------------- parts find

@pytest.mark.parametrize(("query", "first"), [
    (["34", "wiper"], "DW-34-44"),
    (["od", "41"], None),
    (["x-ring", "25"], "XR-214"),
    (["24.99x3.53"], None),
    (["glide"], "GR-31.2"),
])
def test_parts_find(shop, monkeypatch, capsys, query, first):
    data = ok_json(monkeypatch, capsys, shop, "parts", "find", *query)
    hits = [h["part"] for h in data["hits"]]
    if first:
        assert hits[0] == first
    if query == ["od", "41"]:
        # no part has a 41 mm outside diameter within 0.5 mm + 2 %: the 42.10 wiper is out
        assert "DW-32-42" not in hits
    if query == ["24.99x3.53"]:
        assert set(hits[:3]) == {"OR-214-NBR", "OR-214-EPDM", "XR-214"}
        assert data["hits"][0]["on_hand"] in (15, 4, 0)


def test_parts_find_od_matches_the_outside_diameter(shop, monkeypatch, capsys):
    data = ok_json(monkeypatch, capsys, shop, "parts", "find", "od", "42")
    assert data["hits"][0]["part"] == "DW-32-42"
    # by hand: window 0.5 mm + 2 % of 42 = 1.34 mm; 100 x (1 - 0.1 / 1.34) = 92.5 -> 93
    assert data["hits"][0]["matched"] == ["od 42: od 42.1 (93)"]
    assert data["hits"][0]["score"] == pytest.approx(100 * (1 - 0.1 / 1.34), abs=0.05)


# ------------------------------------------------------------------------- bad input

@pytest.mark.parametrize(("args", "line"), [
    (["match", "--id", "24.99", "--cs", "35"],
     "error: --cs: seal cross-section 35 mm is outside the plausible 0.5-15 mm"),
    (["match", "--kind", "o_ring", "--cs", "16"],
     "error: --cs: O-ring cross-section 16 mm is outside the plausible 0.5-15 mm"),
    (["match", "--id", "-3", "--cs", "3.53"], "error: --id: length must be positive, got '-3'"),
    (["match", "--id", "0"], "error: --id: length must be positive, got '0'"),
    (["match", "--kind", "dust_wiper", "--id", "1.26"],
     "error: --id: dust wiper inside diameter 1.26 mm is outside the plausible 3-120 mm; "
     "did you mean 1.26in (32.00 mm)?"),
    (["match", "--kind", "wipr", "--id", "32"],
     "error: unknown seal kind 'wipr' (did you mean dust_wiper?)"),
    (["match", "--id", "32", "--fork", "T-23", "--seat", "dust_wiper"],
     "error: unknown fork family 'T-23' (did you mean T-32?)"),
    (["match", "--id", "32", "--fork", "T-32", "--seat", "dust_wipr"],
     "error: unknown seat in T-32 'dust_wipr' (did you mean dust_wiper?)"),
    (["match", "--id", "32", "--seat", "dust_wiper"],
     "error: --seat needs --fork (give both, e.g. --fork XC-32 --seat air_piston_seal)"),
    (["match"], "error: give at least one dimension (--id, --od, --height, --cs), or --fork "
                "and --seat to list the parts that fit a seat"),
    (["match", "--id", "24.99", "--material", "EPMD"],
     "error: unknown material 'EPMD' (did you mean EPDM, AEM, POM?)"),
    (["match", "--id", "25", "--unit", "cm"], "error: --unit must be mm or in, got 'cm'"),
    (["fit", "OR-214-NRB"], "error: unknown part 'OR-214-NRB' (did you mean OR-214-NBR?)"),
    (["fit", "OR-214-NBR", "--fork", "T-32", "--seat", "top_cp"],
     "error: unknown seat in T-32 'top_cp' (did you mean top_cap?)"),
    (["compat", "--kind", "crush-washr"],
     "error: unknown seal kind 'crush-washr' (did you mean crush_washer?)"),
])
def test_bad_input_gets_one_exact_line(shop, monkeypatch, capsys, args, line):
    code, out, err = inv(monkeypatch, capsys, "--db", shop, *args)
    assert code == 1
    assert err.strip() == line
    assert out == ""


# ----------------------------------------------------------------------------- tour

def test_bench_tour_shows_a_match_and_a_verdict(shop, monkeypatch, capsys):
    monkeypatch.setattr(common.console, "width", 220)
    bench_tour(f"sqlite:///{shop}")
    out = capsys.readouterr().out
    assert "reads 25.11 x 3.48 mm" in out  # 24.99 x 1.005, 3.53 x 0.985
    assert "top_cap" in out and "AS568-214" in out
    # no ring of the test shop passes over its tolerances: the tour shows a marginal one
    assert "verdict: MARGINAL" in out and "minimum drives" in out
    assert out.rstrip("\n").splitlines()[-1] == CAUTION


def test_arrays_of_the_shop_exclude_consumables(shop):
    engine = make_engine(f"sqlite:///{shop}")
    from sqlmodel import Session

    from inventory.bench.service import load_shop

    with Session(engine) as s:
        loaded = load_shop(s)
    assert "OIL-5" not in loaded.arrays.codes
    assert isinstance(loaded.arrays, PartArrays) and len(loaded.arrays) == 13
    assert Path(shop).exists()


# ------------------------------------------------------------- narrow terminals

def test_part_codes_are_never_cut_at_80_columns(shop, monkeypatch, capsys):
    """COLUMNS=80 and a console 80 wide: every part code and designation is printed whole
    on one line; other columns are dropped or wrapped first."""
    monkeypatch.setenv("COLUMNS", "80")
    for extra in ([], ["--fork", "T-32", "--seat", "top_cap"]):
        data = ok_json(monkeypatch, capsys, shop, "match", "--id", "24.99", "--cs", "3.53",
                       *extra)
        monkeypatch.setattr(sys, "argv", ["inventory", "--db", shop, "match", "--id", "24.99",
                                          "--cs", "3.53", *extra])
        monkeypatch.setattr(common.console, "width", 80)
        with pytest.raises(SystemExit) as exc:
            run()
        out = capsys.readouterr().out
        assert not exc.value.code
        lines = out.splitlines()
        table = [line for line in lines if line.startswith(("│", "┃"))]
        assert max(len(line) for line in table) <= 80
        for c in data["candidates"]:
            name = c.get("part") or c["designation"]
            assert any(f"│ {name} " in line for line in table), (name, out)
        assert "…" not in out
        # the bench's question is "on the shelf or to order": the stock column stays
        header = next(line for line in table if line.startswith("┃"))
        assert "stock" in header, out
        if not extra:  # without a seat the material shows, EPDM marked and ranked last
            assert any("material" in line for line in table)
            row = next(line for line in table
                       if line.count("│") > 2 and line.split("│")[2].strip() == "OR-214-EPDM")
            assert "EPDM !" in row
        else:
            assert any("verdict" in line for line in table)


def test_match_table_drops_columns_before_cutting_codes():
    from rich.console import Console

    from inventory.cli.match_view import DROP_ORDER, match_table

    long_code = "OR-M25.8-1.80-NBR70-SPECIAL"
    columns = {"#": ["1"], "part": [long_code], "kind": ["o_ring"], "size mm": ["25.80 x 1.80"],
               "material": ["NBR"], "score": ["0.32"], "driven by": ["id 0.17"],
               "stock": ["12 MAIN, BENCH"], "verdict": ["marginal"],
               "notes": [f"stocked as {long_code}; PAST STORAGE x3"]}
    seen = {}
    for width in (160, 100, 80, 64):  # 64: the narrowest that holds this 27-character code
        console = Console(width=width, record=True)
        table, footnotes = match_table("t", columns, width)
        console.print(table)
        text = console.export_text()
        assert any(f"│ {long_code} │" in line for line in text.splitlines()), text
        assert max(len(line) for line in text.splitlines()) <= width
        assert "…" not in text
        notes = "\n".join(footnotes) if footnotes else text
        assert long_code in notes.replace("│", "").replace(" ", "") or long_code in notes
        seen[width] = (text.split("┡")[0], footnotes)
    assert all(name in seen[160][0] for name in DROP_ORDER)  # wide: nothing dropped
    assert "driven by" not in seen[80][0] and "kind" not in seen[80][0]
    assert "verdict" in seen[64][0] and "notes" not in seen[64][0]
    assert all("stock" in seen[w][0] for w in seen)  # never dropped
    assert seen[64][1] == [f"#1: stocked as {long_code}; PAST STORAGE x3"]


def test_match_by_sql_on_both_databases_equals_the_array_search(store, monkeypatch, capsys):
    """``inventory match`` with readings reads through the plain reader: on SQLite the
    standard library's driver, on PostgreSQL a read-only SQLAlchemy connection. The oracle
    is the array search over the same database (the web app's path); AS568-214 is 24.99 x
    3.53 mm (REFERENCE.md 1.2)."""
    from inventory.bench import service as svc
    from inventory.core.db import read_transaction
    from tests.conftest import inv

    url = store.url.render_as_string(hide_password=False)
    form = svc.MatchForm(id_="24.99", cs="3.53", material="NBR")
    code, out, err = inv(monkeypatch, capsys, "--db", url, "match", "--id", "24.99",
                         "--cs", "3.53", "--material", "NBR", "--json")
    assert code == 0, err
    with read_transaction(store) as s:
        expected = svc.match_parts(s, form).to_dict()
    got = json.loads(out)
    assert got == json.loads(json.dumps(expected))
    assert got["candidates"][0]["score"] is not None
    assert any(c.get("designation") == "AS568-214" for c in got["candidates"])
