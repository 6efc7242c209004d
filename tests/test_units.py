"""Lengths typed in mm or inch: parsing, display, round trips and implausible values.

Outside reference: the international inch is exactly 25.4 mm (international yard and pound
agreement, 1959; NIST SP 811). AS568 sizes give realistic inch readings (REFERENCE.md 1.2).
"""

from __future__ import annotations

from fractions import Fraction

import pytest
from hypothesis import given
from hypothesis import strategies as st

from inventory.bench.seals import check_plausible, parse_dimension
from inventory.core.model import PartKind
from inventory.core.units import (
    MM_PER_INCH,
    check_range,
    format_length,
    inch_hint,
    parse_length,
    read_length,
)


def test_inch_is_exactly_25_4_mm():
    # international inch, 1959 agreement (NIST SP 811)
    assert MM_PER_INCH == 25.4
    assert parse_length("1in") == 25.4


@pytest.mark.parametrize("text,mm", [
    ("32", 32.0),
    ("32mm", 32.0),
    ("32 mm", 32.0),
    ("  32 MM ", 32.0),
    ("31,5", 31.5),  # decimal comma
    ("31.5", 31.5),
    ("3.2cm", 32.0),
    ("0.984in", 0.984 * 25.4),  # AS568-214 inside diameter (REFERENCE.md 1.2)
    ("1.26in", 1.26 * 25.4),
    ('1.26"', 1.26 * 25.4),
    ("1.26 inch", 1.26 * 25.4),
    ("1-1/4in", 1.25 * 25.4),
    ("1 1/4 in", 1.25 * 25.4),
    ("3/8in", 0.375 * 25.4),
    (".5in", 12.7),
])
def test_parse_length_forms(text, mm):
    assert parse_length(text) == pytest.approx(mm, rel=1e-12)


def test_bare_number_uses_the_default_unit_and_says_so():
    assert parse_length("1.26", default_unit="in") == pytest.approx(32.004)
    assert read_length("32").explicit is False
    assert read_length("32mm").explicit is True
    assert read_length("1.26in").unit == "in"
    assert parse_length(32) == 32.0


@pytest.mark.parametrize("text,message", [
    ("", "empty"),
    ("-3", "positive"),
    ("0", "positive"),
    ("0mm", "positive"),
    ("abc", "not a length"),
    ("1,234.5", "one decimal mark"),
    ("32 furlongs", "unknown length unit"),
    ("1/0in", "division by zero"),
])
def test_parse_length_errors(text, message):
    with pytest.raises(ValueError, match=message):
        parse_length(text)


def test_format_length():
    assert format_length(24.9936, "mm") == "24.99 mm"
    assert format_length(24.9936, "in") == "0.984 in"
    assert format_length(31.5, "mm", decimals=1, with_unit=False) == "31.5"
    assert format_length(None) == "-"
    with pytest.raises(ValueError, match="unknown display unit"):
        format_length(3.0, "ft")


@given(st.floats(min_value=0.05, max_value=2000.0, allow_nan=False))
def test_mm_round_trip(mm):
    # shown to 0.01 mm, read back within half of that
    assert abs(parse_length(format_length(mm, "mm")) - mm) <= 0.005 + 1e-9


@given(st.floats(min_value=0.05, max_value=2000.0, allow_nan=False))
def test_inch_round_trip(mm):
    # shown to 0.001 in, read back within half of that
    assert abs(parse_length(format_length(mm, "in")) - mm) <= 0.0005 * 25.4 + 1e-9


@given(st.integers(0, 20), st.integers(1, 63), st.sampled_from([2, 4, 8, 16, 32, 64]))
def test_fractional_inches_are_exact(whole, num, den):
    value = whole + Fraction(num, den)
    for text in (f"{whole}-{num}/{den}in", f"{whole} {num}/{den} in", f'{whole} {num}/{den}"'):
        if whole == 0:
            text = f"{num}/{den}in"
        assert parse_length(text) == pytest.approx(float(value) * 25.4, rel=1e-12)


@given(st.decimals(min_value="0.01", max_value="999.99", places=2))
def test_decimal_comma_equals_decimal_point(value):
    text = f"{value:.2f}"
    assert parse_length(text.replace(".", ",")) == parse_length(text)


def test_inch_value_typed_without_unit_gets_a_hint():
    # a 32 mm stanchion wiper measured in inches: 1.26 in (REFERENCE.md 9 stanchion sizes)
    with pytest.raises(ValueError, match=r"did you mean 1\.26in \(32\.00 mm\)\?"):
        parse_dimension("1.26", PartKind.DUST_WIPER, "id")
    # an AS568 -2xx cross-section typed in inches: 0.139 in = 3.53 mm (REFERENCE.md 1.2)
    with pytest.raises(ValueError, match=r"did you mean 0\.139in \(3\.53 mm\)\?"):
        parse_dimension("0.139", PartKind.O_RING, "cs")
    # with its unit it is fine
    assert parse_dimension("1.26in", PartKind.DUST_WIPER, "id") == pytest.approx(32.004)
    assert parse_dimension("0.139in", PartKind.O_RING, "cs_mm") == pytest.approx(3.5306)


def test_implausible_values_are_refused_without_a_wrong_hint():
    # an O-ring cross-section over 15 mm is a typing mistake, and not an inch value either
    with pytest.raises(ValueError, match="outside the plausible 0.5-15 mm") as err:
        parse_dimension("35", PartKind.O_RING, "cs")
    assert "did you mean" not in str(err.value)
    # an explicit inch value that is implausible gets no inch hint
    with pytest.raises(ValueError) as err:
        parse_dimension("0.01in", PartKind.O_RING, "cs")
    assert "did you mean" not in str(err.value)
    with pytest.raises(ValueError, match="positive"):
        check_plausible(PartKind.O_RING, "cs", -1.0)
    with pytest.raises(ValueError, match="unknown dimension"):
        check_plausible(PartKind.O_RING, "width", 3.0)


def test_inch_hint_only_when_the_inch_reading_is_plausible():
    assert inch_hint(1.26, 3.0, 120.0) == "did you mean 1.26in (32.00 mm)?"
    assert inch_hint(32.0, 3.0, 120.0) is None  # plausible as mm already
    assert inch_hint(9.0, 0.5, 15.0) is None  # 9 in = 228.6 mm: not plausible either
    assert check_range(3.53, 0.5, 15.0, what="cs") == 3.53
