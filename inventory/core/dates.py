"""Dates as people and spreadsheets write them (the one date parser: the command line, spreadsheet
cells and web forms all come here, through :mod:`inventory.core.parse`).

Three sources of trouble, each handled here and nowhere else:

- Spreadsheet serial numbers. ECMA-376 Part 1 (section 18.17.4, "Dates and Times") defines
  two date systems: in the 1900 system serial 1 is 1900-01-01 and serial 60 is 1900-02-29, a
  day that never existed (kept for compatibility with an old spreadsheet program that took
  1900 for a leap year), so serial 61 is 1900-03-01; in the 1904 system serial 0 is
  1904-01-01. A workbook says which one it uses (``<workbookPr date1904="1"/>``).
- Day and month order. ``03/04/2024`` is 3 April to most of the world and 4 March to some.
  One file is usually typed by one system, so the order is decided per file from the rows that
  can only be read one way (``25/03/2024``); when every date could be either, the file cannot
  decide and the caller must say (see :func:`decide_order`).
- The written forms: ISO 8601 (``2024-03-25``, ``20240325``, ``2024-W13-1``), numeric with
  ``/``, ``.`` or ``-`` and two- or four-digit years, and English month names
  (``25 Mar 2024``, ``March 25, 2024``, ``25-Mar-24``).

Everything raises ``ValueError`` saying what was expected; the sheet reader adds the cell.
"""

from __future__ import annotations

import math
import re
from collections.abc import Iterable
from dataclasses import dataclass, field
from datetime import date, datetime, timedelta
from typing import Any, Literal

Order = Literal["dmy", "mdy"]
ORDERS: tuple[Order, ...] = ("dmy", "mdy")

# ECMA-376 Part 1, 18.17.4.1: the 1900 system counts from 1900-01-01 = 1 (with the phantom
# 1900-02-29 = 60); the 1904 system from 1904-01-01 = 0. Largest serial: 9999-12-31.
_BASE_1900 = date(1899, 12, 31)  # serial 1 -> 1900-01-01, valid for serials 1..59
_BASE_1900_AFTER_QUIRK = date(1899, 12, 30)  # serial 61 -> 1900-03-01
_BASE_1904 = date(1904, 1, 1)
MAX_SERIAL_1900 = 2958465  # 9999-12-31
MAX_SERIAL_1904 = MAX_SERIAL_1900 - 1462

EXPECTED = "a date like 2024-03-25, 25/03/2024, 25 Mar 2024 or a spreadsheet date"

MONTHS = {
    "jan": 1, "january": 1, "feb": 2, "february": 2, "mar": 3, "march": 3, "apr": 4,
    "april": 4, "may": 5, "jun": 6, "june": 6, "jul": 7, "july": 7, "aug": 8, "august": 8,
    "sep": 9, "sept": 9, "september": 9, "oct": 10, "october": 10, "nov": 11, "november": 11,
    "dec": 12, "december": 12,
}
_WEEKDAY = r"(?:(?:mon|tue|tues|wed|thu|thur|thurs|fri|sat|sun)[a-z]*\.?,?\s+)?"
_NUMERIC = re.compile(r"^(\d{1,2})([/.\-])(\d{1,2})\2(\d{2}|\d{4})$")
_ISO_LIKE = re.compile(r"^(\d{4})[/.\-](\d{1,2})[/.\-](\d{1,2})$")
_DAY_MONTH_NAME = re.compile(
    rf"^{_WEEKDAY}(\d{{1,2}})(?:st|nd|rd|th)?[\s\-/.]*([a-z]+)\.?[\s\-/.,]*(\d{{2}}|\d{{4}})$")
_MONTH_NAME_DAY = re.compile(
    rf"^{_WEEKDAY}([a-z]+)\.?[\s\-/.]*(\d{{1,2}})(?:st|nd|rd|th)?,?[\s\-/.]*(\d{{2}}|\d{{4}})$")
_TIME_TAIL = re.compile(r"[ T]\d{1,2}:\d{2}(?::\d{2}(?:\.\d+)?)?\s*(?:[ap]\.?m\.?)?$", re.I)


def from_serial(serial: float, *, date1904: bool = False) -> date:
    """The calendar date of a spreadsheet serial number (the time of day is dropped).

    1900 system: 1 -> 1900-01-01, 59 -> 1900-02-28, 60 -> refused (1900-02-29 does not
    exist), 61 -> 1900-03-01. 1904 system: 0 -> 1904-01-01.
    """
    if isinstance(serial, bool) or not isinstance(serial, int | float) or not math.isfinite(serial):
        raise ValueError(f"expected a spreadsheet date number, got {serial!r}")
    day = math.floor(serial)
    if date1904:
        if not 0 <= day <= MAX_SERIAL_1904:
            raise ValueError(f"expected a spreadsheet date number from 0 to {MAX_SERIAL_1904} "
                             f"(1904 date system), got {_num(serial)}")
        return _BASE_1904 + timedelta(days=day)
    if not 1 <= day <= MAX_SERIAL_1900:
        raise ValueError(f"expected a spreadsheet date number from 1 to {MAX_SERIAL_1900}, "
                         f"got {_num(serial)}")
    if day == 60:
        raise ValueError("spreadsheet date number 60 is 1900-02-29, a day that did not exist "
                         "(the 1900 date system's leap-year quirk)")
    if day < 60:
        return _BASE_1900 + timedelta(days=day)
    return _BASE_1900_AFTER_QUIRK + timedelta(days=day)


def to_serial(day: date, *, date1904: bool = False) -> int:
    """The serial number a spreadsheet stores for ``day`` (inverse of :func:`from_serial`)."""
    if date1904:
        n = (day - _BASE_1904).days
        if n < 0:
            raise ValueError(f"{day} is before 1904-01-01, the start of the 1904 date system")
        return n
    if day < date(1900, 1, 1):
        raise ValueError(f"{day} is before 1900-01-01, the start of the 1900 date system")
    if day < date(1900, 3, 1):
        return (day - _BASE_1900).days
    return (day - _BASE_1900_AFTER_QUIRK).days


def _num(x: float) -> str:
    return str(int(x)) if float(x).is_integer() else repr(x)


def _year(text: str) -> int:
    y = int(text)
    if len(text) == 2:
        y += 2000 if y < 70 else 1900  # 00-69 -> 2000s, 70-99 -> 1900s (common practice)
    return y


def _make(y: int, m: int, d: int, raw: str) -> date:
    try:
        return date(y, m, d)
    except ValueError:
        raise ValueError(f"expected a real calendar date, got {raw!r}") from None


def orders_for(text: str) -> frozenset[Order] | None:
    """For a numeric ``a/b/year`` text: the orders it can be read in (``{"dmy"}`` when
    ``a > 12``, ``{"mdy"}`` when ``b > 12``, both when either works, none when neither).
    ``None`` for any other form, whose reading does not depend on the order."""
    m = _NUMERIC.match(_strip_time(text.strip()))
    if not m:
        return None
    a, b = int(m.group(1)), int(m.group(3))
    y = _year(m.group(4))
    out = set()
    for order, (d, mo) in (("dmy", (a, b)), ("mdy", (b, a))):
        try:
            date(y, mo, d)
            out.add(order)
        except ValueError:
            pass
    return frozenset(out)  # type: ignore[arg-type]


def _strip_time(s: str) -> str:
    return _TIME_TAIL.sub("", s).strip()


def parse_text(text: str, *, order: Order | None = None) -> date:
    """A date written as text. Numeric day/month forms need ``order`` unless only one
    reading is a real date."""
    raw = str(text).strip()
    s = raw.lower().replace("\u00a0", " ")
    core = _strip_time(s)
    if not core:
        raise ValueError(f"expected {EXPECTED}, got {raw!r}")
    # ISO 8601 calendar, basic and week dates, and date-times with a T
    if core[:4].isdigit() and (len(core) == 8 and core.isdigit() or not core.isdigit()):
        m = _ISO_LIKE.match(core)
        if m:
            return _make(int(m.group(1)), int(m.group(2)), int(m.group(3)), raw)
        try:
            return date.fromisoformat(core.upper())
        except ValueError:
            pass
        try:
            return datetime.fromisoformat(s.upper()).date()
        except ValueError:
            pass
    m = _NUMERIC.match(core)
    if m:
        a, b, y = int(m.group(1)), int(m.group(3)), _year(m.group(4))
        possible = orders_for(core) or frozenset()
        if not possible:
            raise ValueError(f"expected a real calendar date, got {raw!r}")
        use = order if order in possible else (next(iter(possible)) if len(possible) == 1
                                                 else None)
        if use is None:
            raise ValueError(f"cannot tell day from month in {raw!r}")
        if order is not None and order not in possible:
            other = "month-first" if order == "dmy" else "day-first"
            raise ValueError(f"{raw!r} only reads as a {other} date, but this file is "
                             f"{'day-first' if order == 'dmy' else 'month-first'}")
        return _make(y, b, a, raw) if use == "dmy" else _make(y, a, b, raw)
    for pattern, day_first in ((_DAY_MONTH_NAME, True), (_MONTH_NAME_DAY, False)):
        m = pattern.match(core)
        if m:
            g1, g2, g3 = m.groups()
            name, d = (g2, g1) if day_first else (g1, g2)
            if name not in MONTHS:
                break
            return _make(_year(g3), MONTHS[name], int(d), raw)
    raise ValueError(f"expected {EXPECTED}, got {raw!r}")


def parse_date(value: Any, *, order: Order | None = None, date1904: bool = False) -> date:
    """A date from a cell: a date or date-time cell, a serial number (a number, or a text of
    digits that is not an 8-digit ISO basic date), or text."""
    if isinstance(value, datetime):
        return value.date()
    if isinstance(value, date):
        return value
    if isinstance(value, bool):
        raise ValueError(f"expected {EXPECTED}, got {value!r}")
    if isinstance(value, int | float):
        return from_serial(value, date1904=date1904)
    s = str(value).strip()
    if re.fullmatch(r"\d{1,7}(\.\d+)?", s) and not (len(s) == 8 and s.isdigit()):
        return from_serial(float(s), date1904=date1904)
    return parse_text(s, order=order)


@dataclass
class OrderDecision:
    """How a file's day/month order was settled, with the evidence."""

    order: Order | None
    how: str  # given, day-first rows, month-first rows, no numeric dates, undecided, mixed
    day_first: list[int] = field(default_factory=list)  # indices of values only dmy can read
    month_first: list[int] = field(default_factory=list)  # indices only mdy can read
    ambiguous: list[int] = field(default_factory=list)  # indices either order can read

    @property
    def decided(self) -> bool:
        return self.order is not None or self.how == "no numeric dates"

    def describe(self) -> str:
        if self.how == "given":
            return f"{_label(self.order)} (as given)"
        if self.how == "no numeric dates":
            return "not needed (no day/month numeric dates)"
        if self.order:
            n = len(self.day_first if self.order == "dmy" else self.month_first)
            return f"{_label(self.order)} ({n} row(s) can only be read that way)"
        if self.how == "mixed":
            return (f"mixed: {len(self.day_first)} day-first and {len(self.month_first)} "
                    "month-first row(s)")
        return f"undecided: all {len(self.ambiguous)} numeric date(s) read either way"


def _label(order: Order | None) -> str:
    return {"dmy": "day-first", "mdy": "month-first"}.get(order or "", "unknown")


def decide_order(values: Iterable[Any], *, given: Order | None = None) -> OrderDecision:
    """Settle day/month order for one file from its date cells (in file order).

    Rows that only one order can read are the evidence. One-sided evidence decides. Evidence
    both ways means the file mixes orders (typed by two systems): undecided, with both lists
    kept so the caller can name the cells. No evidence but ambiguous rows: undecided, and the
    caller must ask for ``given``.
    """
    dmy: list[int] = []
    mdy: list[int] = []
    amb: list[int] = []
    seen: dict[str, frozenset[Order] | None] = {}
    for i, v in enumerate(values):
        if type(v) is not str:
            continue
        orders = seen.get(v, ())
        if orders == ():
            orders = seen[v] = orders_for(v)
        if orders is None or not orders:
            continue
        if orders == {"dmy"}:
            dmy.append(i)
        elif orders == {"mdy"}:
            mdy.append(i)
        else:
            amb.append(i)
    if given:
        return OrderDecision(given, "given", dmy, mdy, amb)
    if not (dmy or mdy or amb):
        return OrderDecision(None, "no numeric dates")
    if dmy and mdy:
        return OrderDecision(None, "mixed", dmy, mdy, amb)
    if dmy:
        return OrderDecision("dmy", "day-first rows", dmy, mdy, amb)
    if mdy:
        return OrderDecision("mdy", "month-first rows", dmy, mdy, amb)
    return OrderDecision(None, "undecided", dmy, mdy, amb)
