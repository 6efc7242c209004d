"""Header mapping (names, aliases, rapidfuzz, --map) and free-text ranking with named score
parts. rapidfuzz itself is the reference for the similarity figures."""

from __future__ import annotations

import pytest
from rapidfuzz import fuzz

from inventory.history.imports import COUNTS, HISTORY
from inventory.sheets.columns import normalise
from inventory.sheets.fuzzy import Choice, header_score, match_headers, rank

TILL = ["Job No.", "Date in", "Fork model", "Servce type", "Hrs", "Serial", "Part no",
        "Quantitiy", "Tech", "Notes"]


def test_headers_by_alias_and_by_similarity():
    hmap = match_headers(TILL, HISTORY)
    got = {f: (m.header, m.how) for f, m in hmap.matches.items()}
    assert got == {
        "job": ("Job No.", "alias"), "date": ("Date in", "alias"),
        "fork": ("Fork model", "alias"), "service": ("Servce type", "fuzzy"),
        "hours": ("Hrs", "alias"), "fork_ref": ("Serial", "alias"),
        "item": ("Part no", "alias"), "qty": ("Quantitiy", "fuzzy"),
    }
    assert hmap.ignored == ["Tech", "Notes"] and hmap.problems == []
    # the fuzzy score is rapidfuzz's ratio of the letters-and-digits forms
    assert hmap.matches["qty"].score == pytest.approx(fuzz.ratio("quantitiy", "quantity"))


def test_word_order_does_not_matter():
    assert header_score("Date of job", ["job date"]) == pytest.approx(
        fuzz.token_sort_ratio("date of job", "job date"))
    hmap = match_headers(["Date of count", "Part", "Counted"], COUNTS)
    assert hmap.matches["date"].how == "fuzzy"
    assert hmap.matches["date"].score == pytest.approx(
        fuzz.token_sort_ratio("date of count", "count date"))


def test_map_overrides_and_ignores():
    header = ["Ticket", "When", "Model", "Work", "Kit/part", "Pcs", "Internal code"]
    hmap = match_headers(header, HISTORY, overrides={"Kit/part": "item", "internal code": "-",
                                                     "When": "date"})
    assert hmap.matches["item"].how == "map" and hmap.matches["item"].header == "Kit/part"
    assert hmap.matches["date"].how == "map"
    assert "Internal code" not in [m.header for m in hmap.matches.values()]
    assert hmap.matches["fork"].header == "Model" and hmap.matches["qty"].header == "Pcs"


def test_map_problems_name_fields_and_headers():
    hmap = match_headers(["job", "date", "fork", "service"], HISTORY,
                         overrides={"job": "jobref", "Nope": "qty"})
    msgs = [p.message for p in hmap.problems]
    assert "--map job=jobref: no field 'jobref' in a history file" in msgs
    assert any(m.startswith("--map Nope=qty: no header 'Nope' in the file") for m in msgs)


def test_missing_required_column_suggests_a_map():
    hmap = match_headers(["Job", "Dat", "Model"], HISTORY, threshold=95)
    problems = {p.message.split(" (")[0]: p.hint for p in hmap.problems}
    assert "missing required column 'date'" in problems
    assert problems["missing required column 'date'"] == 'if \'Dat\' is the date, add --map "Dat=date"'
    assert "missing required column 'service'" in problems


def test_two_columns_for_one_field_is_a_problem():
    hmap = match_headers(["job", "date", "fork", "service", "qty", "quantity"], HISTORY)
    assert [p.message for p in hmap.problems] == [
        "two columns could be 'qty': 'qty' and 'quantity'"]


def test_normalise_ignores_case_space_and_punctuation():
    assert normalise(" Job  No. ") == normalise("job_no") == "jobno"


FORKS = [
    Choice("TR-34", ("Trail fork, 34 mm stanchions, air negative chamber",), numbers=(
        (34, 34), (120, 150)), years=(2020, 9999)),
    Choice("TR-32", ("Trail fork, 32 mm stanchions, air spring with coil negative spring",),
           numbers=((32, 32), (100, 140)), years=(2016, 2021)),
    Choice("CL-34", ("Coil-sprung trail and dirt fork, 34 mm stanchions",),
           numbers=((34, 34), (100, 140)), years=(2015, 9999)),
]


def test_rank_parts_explain_the_score():
    best = rank("trail 34mm air", FORKS)[0]
    assert best.code == "TR-34"
    assert dict(best.parts) == {"words": 80.0, "numbers": 10.0}  # trail+air found, 34 fits
    cl = next(c for c in rank("trail 34mm air", FORKS) if c.code == "CL-34")
    assert dict(cl.parts) == {"words": 40.0, "numbers": 10.0}  # "air" not in its words
    yr = rank("34mm trail fork 2019 air", FORKS)[0]
    assert yr.code == "TR-34" and dict(yr.parts)["years"] == -5.0  # made from 2020
    assert rank("tr34 gen2", FORKS)[0].parts[0] == ("code", 100.0)
    assert rank("tr345", FORKS)[0].score < 90  # a longer number is not the code


def test_rank_tolerates_typos_and_abbreviations():
    assert rank("trial 32 air", FORKS)[0].code == "TR-32"  # "trial": rapidfuzz ratio 80
    assert fuzz.ratio("trial", "trail") >= 80
    assert dict(rank("tr 34 air neg", FORKS)[0].parts)["words"] == 80.0  # "neg" -> negative
