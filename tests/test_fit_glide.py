"""Glide rings (PTFE guide bands) and scrapers held in a rod-gland groove.

The geometry is worked by hand in each test from the seat and part numbers (plain
subtraction; the formulas are those of the rule docstrings). The pass ranges are trade
practice, not a standard: ISO 6547 (piston housings with guide rings) is known to us by its
scope only (REFERENCE.md 4), so the limits are marked common practice in FitRules.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from inventory.bench.fit import FitRules, Verdict, fit
from inventory.bench.matching import PartArrays, fit_matrix
from inventory.core.model import Gland, Medium, Motion, PartKind, PartSpec, SeatSpec
from tests.support.synthetic import parts_near

# An air-piston guide groove: bore 31.20 H8, groove root 28.10, groove width 5.80 mm
PISTON = SeatSpec("FAM-G", "air_piston_guide", "air_piston", PartKind.GLIDE_RING,
                  Gland.PISTON, Motion.DYNAMIC, Medium.AIR, bore_mm=31.20, groove_mm=28.10,
                  groove_width_mm=5.80, bore_fit="H8")
BAND = PartSpec("GR-31.2", PartKind.GLIDE_RING, id_mm=28.10, od_mm=31.10, height_mm=5.50,
                material="PTFE")


def _checks(part: PartSpec, seat: SeatSpec = PISTON) -> dict:
    return {c.name: c for c in fit(part, seat).checks}


def test_band_in_its_piston_groove_by_hand():
    checks = _checks(BAND)
    # by hand: axial 5.80 - 5.50 = 0.30; depth (31.20 - 28.10) / 2 = 1.55, thickness
    # (31.10 - 28.10) / 2 = 1.50, play 0.05; bore clearance 31.20 - 31.10 = 0.10 (common
    # practice ranges: 0.05-0.6, 0-0.15, 0-0.25 mm)
    assert checks["axial clearance in groove"].value == pytest.approx(0.30)
    assert checks["radial play (depth - thickness)"].value == pytest.approx(0.05)
    assert checks["clearance to bore"].value == pytest.approx(0.10)
    assert all(c.status == Verdict.PASS for c in checks.values())
    assert checks["material"].value == "PTFE"
    assert "ISO 6547" in checks["radial play (depth - thickness)"].source
    assert fit(BAND, PISTON).verdict == Verdict.PASS


def test_undersize_thick_and_wide_bands():
    under = dataclasses.replace(BAND, code="under", id_mm=27.90, od_mm=30.90)
    c = _checks(under)
    # play still 1.55 - 1.50 = 0.05, but the free band is 0.30 mm under the bore: marginal
    assert c["radial play (depth - thickness)"].value == pytest.approx(0.05)
    assert c["clearance to bore"].value == pytest.approx(0.30)
    assert c["clearance to bore"].status == Verdict.MARGINAL
    assert fit(under, PISTON).verdict == Verdict.MARGINAL
    thick = dataclasses.replace(BAND, code="thick", id_mm=28.05, od_mm=31.25)
    c = _checks(thick)
    # thickness 1.60 over a 1.55 depth: -0.05 mm play, PTFE does not give: binds
    assert c["radial play (depth - thickness)"].value == pytest.approx(-0.05)
    assert c["radial play (depth - thickness)"].status == Verdict.FAIL
    wide = dataclasses.replace(BAND, code="wide", height_mm=5.90)
    assert _checks(wide)["axial clearance in groove"].status == Verdict.FAIL


def test_band_in_a_rod_gland_and_material():
    seat = SeatSpec("FAM-G", "head_guide", "air_shaft_head", PartKind.GLIDE_RING, Gland.ROD,
                    Motion.DYNAMIC, Medium.OIL, rod_mm=12.0, groove_mm=15.10,
                    groove_width_mm=4.0)
    band = PartSpec("GR-12", PartKind.GLIDE_RING, id_mm=12.10, od_mm=15.00, height_mm=3.70,
                    material="PTFE")
    c = _checks(band, seat)
    # depth (15.10 - 12.0) / 2 = 1.55; thickness (15.00 - 12.10) / 2 = 1.45; play 0.10;
    # running clearance on the rod 12.10 - 12.0 = 0.10; axial 4.0 - 3.7 = 0.30
    assert c["radial play (depth - thickness)"].value == pytest.approx(0.10)
    assert c["clearance to rod"].value == pytest.approx(0.10)
    assert c["axial clearance in groove"].value == pytest.approx(0.30)
    assert fit(band, seat).verdict == Verdict.PASS
    # EPDM never in an oil-wetted seat (REFERENCE.md 6)
    epdm = dataclasses.replace(band, code="GR-12-E", material="EPDM")
    assert _checks(epdm, seat)["material"].status == Verdict.FAIL
    # a hardness reference does not apply to a plastic band
    names = [ch.name for ch in fit(band, seat, reference_shore_a=70).checks]
    assert "hardness" not in names


def test_glide_limits_are_replaceable():
    rules = dataclasses.replace(FitRules(), glide_running_clearance=dataclasses.replace(
        FitRules().glide_running_clearance, high=0.35))
    under = dataclasses.replace(BAND, code="under", id_mm=27.90, od_mm=30.90)
    assert fit(under, PISTON, rules=rules).verdict == Verdict.PASS


SCRAPER_SEAT = SeatSpec("FAM-G", "air_head_scraper", "air_shaft_head", PartKind.SCRAPER_SEAL,
                        Gland.ROD, Motion.DYNAMIC, Medium.AIR, rod_mm=10.0, groove_mm=14.0,
                        groove_width_mm=3.0, rod_fit="f7")


def test_scraper_in_a_rod_groove_by_hand():
    scraper = PartSpec("SS-10", PartKind.SCRAPER_SEAL, id_mm=9.5, od_mm=14.1, height_mm=2.8,
                       material="AU", hardness_shore_a=92)
    c = _checks(scraper, SCRAPER_SEAT)
    # lip (10 - 9.5) / 10 = 5 %; outside (14.1 - 14.0) / 14.0 = 0.714 %; axial 3.0 - 2.8
    assert c["lip interference on rod"].value == pytest.approx(5.0)
    assert c["outside in groove"].value == pytest.approx(0.1 / 14.0 * 100)
    assert c["axial clearance in groove"].value == pytest.approx(0.2)
    assert fit(scraper, SCRAPER_SEAT).verdict == Verdict.PASS
    tall = dataclasses.replace(scraper, code="tall", height_mm=3.5)
    assert _checks(tall, SCRAPER_SEAT)["axial clearance in groove"].status == Verdict.FAIL
    # a dust wiper is a marginal substitute in a scraper seat (common practice)
    wiper = dataclasses.replace(scraper, code="W", kind=PartKind.DUST_WIPER)
    assert _checks(wiper, SCRAPER_SEAT)["kind"].status == Verdict.MARGINAL


def test_matrix_equals_scalar_fit_for_glide_and_scraper_seats():
    rng = np.random.default_rng(4)
    seats = [PISTON, SCRAPER_SEAT,
             dataclasses.replace(PISTON, seat="rod_guide", gland=Gland.ROD, rod_mm=12.0,
                                 groove_mm=15.1, groove_width_mm=4.0, medium=Medium.OIL)]
    parts = [p for s in seats for p in parts_near(s, 80, rng)]
    arrays = PartArrays.from_specs(parts)
    matrix = fit_matrix(seats, arrays)
    seen = set()
    for i, seat in enumerate(seats):
        for j, part in enumerate(parts):
            if matrix[i, j] >= 0:
                verdict = fit(part, seat).verdict
                assert matrix[i, j] == verdict.code, (seat.seat, part)
                seen.add(verdict)
    assert seen == set(Verdict)
