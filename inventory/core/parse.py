"""One parser per kind of value, with its bounds: lengths, quantities, money, percentages and
fill rates, dates and months, cure quarters, codes and short texts.

The command line (option callbacks), spreadsheet cells (:mod:`inventory.sheets.cells`) and
web forms all read values through these functions, so the same text gives the same value or
the same one-line error everywhere. Each raises :class:`ValueError` whose text names the value
and what was expected; the caller adds where it came from (option, file/sheet/row/column).

Rules shared by every number:

- ASCII digits only (full-width ``１２`` and Arabic-Indic ``١٢`` digits are refused: Python
  would read them as numbers, a person checking the screen would not).
- Finite only: ``nan``, ``inf`` and ``1e400`` are refused; no exponent forms in text.
- Decimal separator: a point, or a comma (``1,5`` is 1.5 on every entry point). A comma
  followed by exactly three digits (``5,000``) could be five or five thousand and is refused;
  thousands are written without separators, with spaces, or with both separators
  (``1.234,50`` / ``1,234.50``: the last one is the decimal separator).

Bounds come from the columns that store the values (``Numeric(12, 4)`` money, ``Integer``
quantities, ``VARCHAR(n)`` codes, see :mod:`inventory.core.tables`) and from a sane shop
range, so SQLite (which does not enforce lengths) and PostgreSQL (which does) refuse the same
values, before anything is written.
"""

from __future__ import annotations

import math
import os
import re
import unicodedata
from datetime import date, datetime, timedelta
from decimal import Decimal
from typing import Any

from inventory.core import cure as _cure
from inventory.core import dates as _dates
from inventory.core import units as _units
from inventory.core.cure import quarter_of
from inventory.core.parse_rules import (  # noqa: F401 (the limits are read as parse.X)
    COST_CEILING_ENV,
    EARLIEST_BOOKING,
    EARLIEST_CURE_YEAR,
    FILL_HIGH,
    FILL_LOW,
    FUTURE_MARGIN_DAYS,
    MAX_LEN,
    MAX_QTY,
    MONEY_MAX,
    MONEY_PLACES,
    UNIT_COST_CEILING,
    _a,
    _err,
    _finite_float,
    _show,
    check_ascii_digits,
    number_text,
)


def unit_cost_ceiling() -> Decimal:
    raw = os.environ.get(COST_CEILING_ENV)
    if not raw:
        return UNIT_COST_CEILING
    return money(raw, what=COST_CEILING_ENV)


# ------------------------------------------------------------------------------ numbers

def number(value: Any, *, what: str = "number", low: float | None = None,
           high: float | None = None) -> float:
    """A finite float, optionally within ``[low, high]``."""
    f = _finite_float(value, what)
    if (low is not None and f < low) or (high is not None and f > high):
        span = f"{low:g} to {high:g}" if low is not None and high is not None else (
            f"{low:g} or more" if low is not None else f"{high:g} or less")
        raise _err(value, f"{_a(what)} of {span}")
    return f


def integer(value: Any, *, what: str = "whole number", max_abs: int = MAX_QTY) -> int:
    """A whole number of any sign, at most ``max_abs`` in size."""
    if isinstance(value, bool):
        raise _err(value, f"{_a(what)}")
    if isinstance(value, int):
        n = value
    else:
        if isinstance(value, float):
            if not math.isfinite(value):
                raise _err(value, f"a finite {what}")
            d = Decimal(repr(value))
        elif isinstance(value, Decimal):
            d = value
        else:
            try:
                d = Decimal(number_text(value, what))
            except ValueError as exc:
                if "0-9" in str(exc):
                    raise
                raise _err(str(value).strip(), f"{_a(what)}") from None
        if not d.is_finite() or d != d.to_integral_value():
            raise _err(value if not isinstance(value, str) else value.strip(), f"{_a(what)}")
        n = int(d)
    if n > max_abs:
        raise ValueError(f"expected {max_abs:,} or less, got {n:,}")
    if n < -max_abs:
        raise ValueError(f"expected {-max_abs:,} or more, got {n:,}")
    return n


def quantity(value: Any, *, what: str = "whole number", signed: bool = False,
             zero: bool = False, max_qty: int = MAX_QTY) -> int:
    """A number of units (or ml of oil): above 0 (``zero`` allows 0; ``signed`` allows
    either sign but not 0), at most ``max_qty`` in one booking."""
    n = integer(value, what=what, max_abs=max_qty)
    if signed:
        if n == 0:
            raise _err(n, f"{_a(what)} other than 0 (-2 takes two out, 3 adds three)")
    elif n < 0 or (n == 0 and not zero):
        raise _err(n, f"{_a(what)}, 0 or more" if zero else f"{_a(what)} above 0")
    return n


MONEY_EXPECTED = "an amount of money like 12.50"


def money(value: Any, *, what: str = "amount", ceiling: Decimal | None = None,
          confirmed: bool = False, confirm_hint: str = "--cost-ok") -> Decimal:
    """An amount of money, 0 or more, as :class:`Decimal` with at most 4 decimals (what
    ``Numeric(12, 4)`` holds; a spreadsheet float is rounded to 4 decimals). Above
    ``ceiling`` it needs ``confirmed``; above :data:`MONEY_MAX` it is always refused."""
    places = Decimal(1).scaleb(-MONEY_PLACES)
    if isinstance(value, bool):
        raise _err(value, MONEY_EXPECTED)
    if isinstance(value, float):
        if not math.isfinite(value):
            raise _err(value, f"a finite {what}")
        d = Decimal(repr(value))
        if abs(d) <= MONEY_MAX:
            d = d.quantize(places)
    elif isinstance(value, int | Decimal):
        d = Decimal(value)
    else:
        raw = str(value).strip()
        stripped = raw.strip("€$£ ")
        try:
            d = Decimal(number_text(stripped, what))
        except ValueError as exc:
            if "three digits" in str(exc) or "0-9" in str(exc):
                raise
            raise _err(raw, MONEY_EXPECTED) from None
        value = raw
    if not d.is_finite():
        raise _err(value, f"a finite {what}")
    if d < 0:
        raise _err(value, f"{MONEY_EXPECTED}, 0 or more")
    if d > MONEY_MAX:
        raise _err(value, f"{_a(what)} of at most {MONEY_MAX:,} (the most the database holds)")
    if d != d.quantize(places):
        raise _err(value, f"{_a(what)} with at most {MONEY_PLACES} decimals")
    if ceiling is not None and d > ceiling and not confirmed:
        raise _err(value, f"{_a(what)} of at most {ceiling:,} (if it is right, confirm it "
                          f"with {confirm_hint})")
    return d


def unit_cost(value: Any, *, confirmed: bool = False, what: str = "amount",
              confirm_hint: str = "--cost-ok") -> Decimal:
    """A unit cost: :func:`money` with the configurable ceiling (:func:`unit_cost_ceiling`)."""
    return money(value, what=what, ceiling=unit_cost_ceiling(), confirmed=confirmed,
                 confirm_hint=confirm_hint)


def percent(value: Any, *, what: str = "fraction", low: float = 0.0,
            high: float = 1.0) -> float:
    """A fraction from ``0.05`` or ``5%``; it must lie in ``[low, high]``."""
    raw = value.strip() if isinstance(value, str) else value
    expected = f"{_a(what)} of {low:g} to {high:g} (or {low * 100:g}% to {high * 100:g}%)"
    try:
        if isinstance(raw, str) and raw.endswith("%"):
            f = _finite_float(raw[:-1].strip(), what) / 100.0
        else:
            f = _finite_float(raw, what)
    except ValueError as exc:
        if "0-9" in str(exc):
            raise
        raise _err(raw, expected) from None
    if not low <= f <= high:
        raise _err(raw, expected)
    return f


FILL_EXPECTED = (f"a fill rate of {FILL_LOW:g} to {FILL_HIGH:g}, or {FILL_LOW * 100:g} to "
                 f"{FILL_HIGH * 100:g} (%)")


def fill_rate(value: Any, *, what: str = "fill rate") -> float:
    """A fill-rate target: 0.5-0.999 as a fraction, or 50-99.9 as a percentage (with or
    without ``%``). Anything else is refused: ``1.5`` (1.5 %? 150 %?), ``1`` (1 %? 100 %?)."""
    raw = value.strip() if isinstance(value, str) else value
    pct = isinstance(raw, str) and raw.endswith("%")
    try:
        f = _finite_float(raw[:-1].strip() if pct else raw, what)
    except ValueError as exc:
        if "0-9" in str(exc):
            raise
        raise _err(raw, FILL_EXPECTED) from None
    if not pct and FILL_LOW <= f <= FILL_HIGH:
        return f
    if FILL_LOW * 100 <= f <= FILL_HIGH * 100 + 1e-9:
        return round(f / 100.0, 6)
    raise _err(raw, FILL_EXPECTED)


def length(value: Any, *, what: str = "length", unit: str = "mm") -> float:
    """A length in mm from ``32``, ``31,5``, ``1.26in``, ``1-1/4in``: the one length parser,
    :func:`inventory.core.units.read_length` (finite, positive, ASCII digits only); its
    errors are its own (``not a length: 'nan' ...``)."""
    return _units.read_length(value, unit).mm


# -------------------------------------------------------------------------------- dates

DATE_EXPECTED = "a date like 2026-03-25, 25/03/2026 or 25 Mar 2026"


def day(value: Any, *, what: str = "date", order: _dates.Order | None = None,
        date1904: bool = False) -> date:
    """A calendar date: ISO ``2026-03-25``, ``25/03/2026`` (day and month must be told apart,
    or ``order`` given), ``25 Mar 2026``; from a spreadsheet also a date cell or a serial
    number (a number, never text: ``45000`` typed as text is refused)."""
    if isinstance(value, datetime):
        return value.date()
    if isinstance(value, date):
        return value
    if isinstance(value, int | float) and not isinstance(value, bool):
        return _dates.from_serial(value, date1904=date1904)
    raw = str(value).strip()
    check_ascii_digits(raw, what)
    if raw.isdigit() and len(raw) != 8:
        raise _err(raw, DATE_EXPECTED)
    try:
        return _dates.parse_text(raw, order=order)
    except ValueError as exc:
        if "cannot tell day from month" in str(exc):
            raise _err(raw, "a date whose day and month can be told apart (write it as "
                            "YYYY-MM-DD)") from None
        raise ValueError(str(exc).replace(_dates.EXPECTED, DATE_EXPECTED)) from None


def booking_day(value: Any, *, what: str = "date", today: date | None = None,
                opening: date | None = None, margin_days: int = FUTURE_MARGIN_DAYS,
                order: _dates.Order | None = None) -> date:
    """A booking date: :func:`day` within ``[opening (or 2000-01-01), today + margin]``."""
    d = day(value, what=what, order=order)
    today = today or date.today()
    first = opening or EARLIEST_BOOKING
    last = today + timedelta(days=margin_days)
    if not first <= d <= last:
        since = "the ledger's opening" if opening else "the earliest booking date"
        raise _err(value.strip() if isinstance(value, str) else d.isoformat(),
                   f"a date from {first.isoformat()} ({since}) to {last.isoformat()} "
                   f"(today + {margin_days} day{'s' if margin_days != 1 else ''})")
    return d


_MONTH_NUM = re.compile(r"^(\d{4})[-/.](\d{1,2})$|^(\d{1,2})[-/.](\d{4})$")
_MONTH_NAME = re.compile(r"^([a-z]+)\.?[\s\-/]*(\d{4})$")
MONTH_EXPECTED = "a month like 2026-03, 03/2026 or Mar 2026"


def month(value: Any, *, what: str = "month") -> tuple[int, int]:
    """A calendar month as ``(year, month)`` from ``2026-03``, ``03/2026`` or ``Mar 2026``."""
    if isinstance(value, datetime | date):
        return value.year, value.month
    raw = str(value).strip()
    check_ascii_digits(raw, what)
    m = _MONTH_NUM.match(raw)
    if m:
        y, mo = ((int(m.group(1)), int(m.group(2))) if m.group(1)
                 else (int(m.group(4)), int(m.group(3))))
    else:
        n = _MONTH_NAME.match(raw.lower())
        if not n or n.group(1) not in _dates.MONTHS:
            raise _err(raw, MONTH_EXPECTED)
        y, mo = int(n.group(2)), _dates.MONTHS[n.group(1)]
    if not 1 <= mo <= 12 or not 1 <= y <= 9999:
        raise _err(raw, MONTH_EXPECTED)
    return y, mo


# -------------------------------------------------------------------------- cure quarters

CURE_EXPECTED = _cure.EXPECTED


def cure_quarter(value: Any, *, what: str = "cure quarter", received: date | None = None,
                 pivot: int = 70) -> str:
    """Canonical ``YYYYQn`` of a cure date (the forms :func:`inventory.core.cure.parse_quarter`
    reads; ``N/YY`` is a MONTH: ``2/26`` is February 2026, quarter 1, see that module), not
    after the quarter of ``received`` (the receipt day, default today) and not before
    :data:`EARLIEST_CURE_YEAR`. Two-digit years below ``pivot`` are 20xx, the rest 19xx."""
    raw = str(value).strip()
    check_ascii_digits(raw, what)
    try:
        out = _cure.parse_quarter(raw, pivot=pivot)
    except ValueError as exc:
        no_month = re.search(r"there is no month \d+", str(exc))
        raise _err(raw, CURE_EXPECTED + (f"; {no_month.group(0)}" if no_month else "")) \
            from None
    limit = received or date.today()
    if int(out[:4]) < EARLIEST_CURE_YEAR or out > quarter_of(limit):
        raise _err(raw, f"a cure quarter from {EARLIEST_CURE_YEAR}Q1 to {quarter_of(limit)} "
                        f"(not after the receipt on {limit.isoformat()})")
    return out


# -------------------------------------------------------------------------- codes, text

def _bad_char(s: str) -> str | None:
    for ch in s:
        if unicodedata.category(ch) in ("Cc", "Cf", "Cs", "Co", "Cn", "Zl", "Zp"):
            return f"U+{ord(ch):04X} {unicodedata.name(ch, 'control character')}"
    return None


def code(value: Any, *, what: str = "code", max_len: int | None = None) -> str:
    """A code or short text typed by a person (part, lot, job, reason, location): trimmed,
    no control, format or bidirectional characters (BEL, right-to-left override, zero-width
    space), at most ``max_len`` (default :data:`MAX_LEN` for ``what``) characters, the
    column's length on both databases."""
    if isinstance(value, float) and value.is_integer():
        value = int(value)
    s = str(value).strip()
    if not s:
        raise _err(s, f"{_a(what)}")
    bad = _bad_char(s)
    if bad:
        raise _err(s, f"{_a(what)} of printable characters (found {bad})")
    limit = max_len if max_len is not None else MAX_LEN.get(what)
    if limit is not None and len(s) > limit:
        raise _err(s, f"{_a(what)} of at most {limit} characters ({len(s):,} given)")
    return s
