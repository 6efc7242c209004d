"""The demo's documented fits under the tool's rules, read straight from the csv files the
generator wrote (issue 11, items 5, 7 and 8).

catalog_demo/README.md documents three wipers that almost fit; they must not pass in the
seats named there. The issue's own examples: OR-M25.8-1.80-NBR70 in XC-32
``air_piston_seal`` passes at 8.85 % nominal squeeze but not over the ring's tolerances and
the seat's H8 / h9 limits; ``match --id 24.9 --cs 3.5 --fork TR-34 --seat damper_top_cap``
put OR-214-EPDM70 (EPDM in oil: REFERENCE.md 6) first.
"""

from __future__ import annotations

import csv
from pathlib import Path

import pytest

from inventory.bench.fit import Verdict, fit
from inventory.bench.matching import MatchQuery, PartArrays, match
from inventory.core.model import Gland, Medium, Motion, PartKind, PartSpec, SeatSpec

DEMO = Path(__file__).resolve().parent.parent / "catalog_demo"


def _num(text: str) -> float | None:
    return float(text) if text.strip() else None


def _parts() -> dict[str, PartSpec]:
    with (DEMO / "parts.csv").open(encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    out = {}
    for r in rows:
        if r["kind"] in ("oil", "grease", "kit"):
            continue
        out[r["code"]] = PartSpec(
            r["code"], PartKind(r["kind"]), id_mm=_num(r["id_mm"]), od_mm=_num(r["od_mm"]),
            height_mm=_num(r["height_mm"]), cs_mm=_num(r["cs_mm"]),
            material=r["material"] or None,
            hardness_shore_a=int(r["hardness"]) if r["hardness"] else None,
            volume_cm3=_num(r["volume_cm3"]), standard=r["standard"] or None)
    return out


def _seats() -> dict[tuple[str, str], SeatSpec]:
    with (DEMO / "seats.csv").open(encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    return {(r["fork"], r["seat"]): SeatSpec(
        r["fork"], r["seat"], r["position"], PartKind(r["part_kind"]), Gland(r["gland"]),
        Motion(r["motion"]), Medium(r["medium"]), int(r["qty_per_fork"]),
        rod_mm=_num(r["rod_mm"]), bore_mm=_num(r["bore_mm"]), groove_mm=_num(r["groove_mm"]),
        groove_width_mm=_num(r["groove_width_mm"]), housing_depth_mm=_num(r["housing_depth_mm"]),
        rod_fit=r["rod_fit"] or None, bore_fit=r["bore_fit"] or None,
        chamber_volume_cm3=_num(r["chamber_volume_cm3"]), piston_mm=_num(r["piston_mm"]),
        travel_mm=_num(r["travel_mm"]), set_pressure_bar=_num(r["set_pressure_bar"]))
        for r in rows}


@pytest.mark.parametrize("code,seat,check", [
    # README: press fit over the bore's limit; lip interference over it; stands too proud
    ("DW-32-42W", ("TR-32", "dust_wiper"), "press fit at smallest bore"),
    ("DW-34-44S", ("CL-34", "dust_wiper"), "lip interference on stanchion"),
    ("DW-32-43T", ("XC-32", "dust_wiper"), "height above housing depth"),
])
def test_documented_near_misses_do_not_pass(code, seat, check):
    parts, seats = _parts(), _seats()
    result = fit(parts[code], seats[seat])
    assert result.verdict in (Verdict.MARGINAL, Verdict.FAIL)
    statuses = {c.name: c.status for c in result.checks}
    assert statuses[check] != Verdict.PASS
    # the wiper the seat was designed around passes there
    designed = {"TR-32": "DW-32-42", "CL-34": "DW-34-44", "XC-32": "DW-32-43"}[seat[0]]
    assert fit(parts[designed], seats[seat]).verdict == Verdict.PASS


def test_issue_examples_on_the_demo_data():
    parts, seats = _parts(), _seats()
    air = fit(parts["OR-M25.8-1.80-NBR70"], seats[("XC-32", "air_piston_seal")])
    sq = {c.name: c for c in air.checks}["squeeze"]
    assert round(sq.value, 2) == 8.85 and air.verdict != Verdict.PASS
    assert sq.low < 6 < 12 < sq.high  # REFERENCE.md 2: dynamic air 6-12 %
    # issue: "TR-34 air piston 4.4-12.5 %" (without the ring's d1 tolerance and the handbook
    # reduction); with both the low end is lower and the verdict still not a pass
    tr34 = fit(parts["OR-M25.8-2.65-NBR70"], seats[("TR-34", "air_piston_seal")])
    sq34 = {c.name: c for c in tr34.checks}["squeeze"]
    assert sq34.low < 4.4 and 12.5 <= sq34.high < 13.0 and tr34.verdict != Verdict.PASS


def test_a_failing_part_never_ranks_first_in_a_seat():
    parts, seats = _parts(), _seats()
    arrays = PartArrays.from_specs(list(parts.values()))
    seat = seats[("TR-34", "damper_top_cap")]
    found = match(MatchQuery(id_mm=24.9, cs_mm=3.5, kind=PartKind.O_RING), arrays,
                  seat=seat, limit=8)
    order = ["pass", "marginal", "fail", "n/a"]
    ranks = [order.index(c.verdict) for c in found]
    assert ranks == sorted(ranks)
    epdm = next(c for c in found if c.code == "OR-214-EPDM70")
    assert epdm.verdict == "fail" and found[0].verdict != "fail"
    # it scores as well as its NBR twin: only the verdict puts it behind
    nbr = next(c for c in found if c.code == "OR-214-NBR70")
    assert epdm.score == pytest.approx(nbr.score)
    assert found.index(epdm) > found.index(nbr)
