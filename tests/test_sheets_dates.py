"""Dates as spreadsheets and people write them, checked against the published definitions:
ECMA-376 Part 1 section 18.17.4 (the 1900 and 1904 date systems), ISO 8601 (calendar,
basic and week dates), and openpyxl's own serial conversion as a second implementation."""

from __future__ import annotations

from datetime import date, datetime, timedelta

import pytest
from hypothesis import given
from hypothesis import strategies as st
from openpyxl.utils.datetime import CALENDAR_MAC_1904, from_excel

from inventory.sheets import dates


# ECMA-376 Part 1, 18.17.4.1 "Date Conversion for Serial Date-Times": in the 1900 date
# system serial 1 is 1900-01-01, serial 60 is the non-existent 1900-02-29 and serial 61 is
# 1900-03-01; in the 1904 system serial 0 is 1904-01-01.
@pytest.mark.parametrize(("serial", "expected"), [
    (1, date(1900, 1, 1)),
    (2, date(1900, 1, 2)),
    (59, date(1900, 2, 28)),
    (61, date(1900, 3, 1)),
    (62, date(1900, 3, 2)),
    (366, date(1900, 12, 31)),  # 1900 has 365 days + the phantom 29 Feb = serial 366
    (367, date(1901, 1, 1)),
    (45000, date(2023, 3, 15)),  # (recalled from memory) a commonly quoted example
    (45000.75, date(2023, 3, 15)),  # the time of day is dropped
    (dates.MAX_SERIAL_1900, date(9999, 12, 31)),  # ECMA-376: the largest date serial
])
def test_1900_system_serials(serial, expected):
    assert dates.from_serial(serial) == expected


def test_serial_60_is_the_phantom_leap_day_and_refused():
    # ECMA-376 Part 1, 18.17.4.1: serial 60 stands for 1900-02-29, which did not exist.
    with pytest.raises(ValueError, match="60 is 1900-02-29, a day that did not exist"):
        dates.from_serial(60)
    with pytest.raises(ValueError, match="from 1 to"):
        dates.from_serial(0)  # "1900-01-00"


@pytest.mark.parametrize(("serial", "expected"), [
    (0, date(1904, 1, 1)),  # ECMA-376 Part 1, 18.17.4.1: the 1904 base date
    (1, date(1904, 1, 2)),
    (59, date(1904, 2, 29)),  # 1904 was a leap year: no quirk in this system
    (1462, date(1908, 1, 2)),
    (43538, date(2023, 3, 15)),  # 1462 days below the 1900 serial of the same day
])
def test_1904_system_serials(serial, expected):
    assert dates.from_serial(serial, date1904=True) == expected


@given(st.integers(min_value=1, max_value=dates.MAX_SERIAL_1900).filter(lambda n: n != 60))
def test_1900_serials_agree_with_openpyxl(serial):
    # openpyxl's from_excel is an independent implementation of the same system.
    assert dates.from_serial(serial) == from_excel(serial).date()
    assert dates.to_serial(dates.from_serial(serial)) == serial


@given(st.integers(min_value=1, max_value=dates.MAX_SERIAL_1904))
def test_1904_serials_agree_with_openpyxl(serial):
    assert dates.from_serial(serial, date1904=True) == from_excel(serial, CALENDAR_MAC_1904).date()
    assert dates.to_serial(dates.from_serial(serial, date1904=True), date1904=True) == serial


def test_same_day_differs_by_1462_between_systems():
    # ECMA-376 Part 1, 18.17.4.1: the two systems are 1462 days apart (after 1900-03-01).
    for d in (date(1904, 1, 1), date(2000, 2, 29), date(2026, 12, 2)):
        assert dates.to_serial(d) - dates.to_serial(d, date1904=True) == 1462


# ISO 8601-1:2019: calendar dates extended (YYYY-MM-DD) and basic (YYYYMMDD), week dates
# (YYYY-Www-D) and date-times with a T separator; the week-date values are checked against
# Python's date.fromisocalendar, which implements the ISO week calendar.
@pytest.mark.parametrize(("text", "expected"), [
    ("2024-03-25", date(2024, 3, 25)),
    ("20240325", date(2024, 3, 25)),
    ("2024-W13-1", date.fromisocalendar(2024, 13, 1)),
    ("2020-W53-7", date.fromisocalendar(2020, 53, 7)),  # a 53-week year
    ("2024-03-25T10:30:00", date(2024, 3, 25)),
    ("2024-03-25 10:30", date(2024, 3, 25)),
    ("2024-02-29", date(2024, 2, 29)),
])
def test_iso_8601_forms(text, expected):
    assert dates.parse_date(text) == expected


@pytest.mark.parametrize("text", ["2023-02-29", "2024-13-01", "2024-W54-1", "20241301"])
def test_iso_forms_that_are_not_dates(text):
    with pytest.raises(ValueError):
        dates.parse_date(text)


@pytest.mark.parametrize(("text", "order", "expected"), [
    ("25/03/2024", None, date(2024, 3, 25)),  # only day-first reads
    ("03/25/2024", None, date(2024, 3, 25)),  # only month-first reads
    ("03/04/2024", "dmy", date(2024, 4, 3)),
    ("03/04/2024", "mdy", date(2024, 3, 4)),
    ("3.4.24", "dmy", date(2024, 4, 3)),
    ("03-04-99", "dmy", date(1999, 4, 3)),  # two-digit years 70-99 are 19xx
    ("25 Mar 2024", None, date(2024, 3, 25)),
    ("25-Mar-24", None, date(2024, 3, 25)),
    ("March 25, 2024", None, date(2024, 3, 25)),
    ("Mon 25th March 2024", None, date(2024, 3, 25)),
    ("Sept 1 2024", None, date(2024, 9, 1)),
])
def test_written_forms(text, order, expected):
    assert dates.parse_text(text, order=order) == expected


def test_ambiguous_without_order_is_refused():
    with pytest.raises(ValueError, match="cannot tell day from month in '03/04/2024'"):
        dates.parse_text("03/04/2024")


def test_order_given_but_row_only_reads_the_other_way():
    with pytest.raises(ValueError, match="only reads as a month-first date"):
        dates.parse_text("03/25/2024", order="dmy")


def test_decide_order_from_unambiguous_rows():
    d = dates.decide_order(["01/02/2024", "25/02/2024", date(2024, 1, 1), 45000])
    assert (d.order, d.day_first, d.ambiguous) == ("dmy", [1], [0])
    d = dates.decide_order(["01/02/2024", "02/25/2024"])
    assert d.order == "mdy" and d.month_first == [1]
    d = dates.decide_order(["01/02/2024", "03/04/2024"])
    assert d.order is None and not d.decided and d.how == "undecided"
    d = dates.decide_order(["13/02/2024", "02/13/2024"])
    assert d.order is None and d.how == "mixed"
    d = dates.decide_order(["2024-02-13", date(2024, 1, 1)])
    assert d.decided and d.order is None  # nothing depends on the order
    assert dates.decide_order(["01/02/2024"], given="mdy").order == "mdy"


@given(st.dates(min_value=date(1990, 1, 1), max_value=date(2069, 12, 31)),
       st.sampled_from(["/", ".", "-"]), st.booleans())
def test_numeric_forms_round_trip_in_the_decided_order(day, sep, two_digit_year):
    y = f"{day.year % 100:02d}" if two_digit_year else str(day.year)
    dmy = f"{day.day:02d}{sep}{day.month:02d}{sep}{y}"
    mdy = f"{day.month}{sep}{day.day}{sep}{y}"
    assert dates.parse_text(dmy, order="dmy") == day
    assert dates.parse_text(mdy, order="mdy") == day


def test_cells_of_every_type():
    assert dates.parse_date(datetime(2024, 3, 25, 17, 5)) == date(2024, 3, 25)
    assert dates.parse_date(date(2024, 3, 25)) == date(2024, 3, 25)
    assert dates.parse_date(45376) == date(2024, 3, 25)
    assert dates.parse_date("45376") == date(2024, 3, 25)  # a serial typed as text (csv)
    assert dates.parse_date(45376 - 1462, date1904=True) == date(2024, 3, 25)
    for bad in (True, "next tue", "", "32/01/2024", float("nan")):
        with pytest.raises(ValueError):
            dates.parse_date(bad)


def test_every_day_of_a_leap_year_reads_back():
    d = date(2024, 1, 1)
    while d.year == 2024:
        assert dates.parse_date(d.strftime("%d %b %Y")) == d
        assert dates.from_serial(dates.to_serial(d)) == d
        d += timedelta(days=1)
