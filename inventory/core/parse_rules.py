"""The limits and the text rules shared by :mod:`inventory.core.parse`'s parsers (pure):
the bounds taken from the columns that store the values, the one error form, ASCII digits
and the reading of a typed number's separators (the rules are described in that module)."""

from __future__ import annotations

import math
import re
import unicodedata
from datetime import date
from decimal import Decimal
from typing import Any

# ------------------------------------------------------------------------------- limits

#: ``Numeric(12, 4)``: 8 digits before the point, 4 after.
MONEY_MAX = Decimal("99999999.9999")
MONEY_PLACES = 4
#: A unit cost above this needs an explicit confirmation (``--cost-ok``); a scanned barcode
#: or a misplaced total in the cost field is caught here. ``$INVENTORY_MAX_UNIT_COST``
#: changes it.
UNIT_COST_CEILING = Decimal("10000")
COST_CEILING_ENV = "INVENTORY_MAX_UNIT_COST"
#: Largest quantity one booking may carry (units, or ml for oil): a shop range far inside
#: the ``Integer`` column (2,147,483,647), so a sum of many bookings cannot overflow.
MAX_QTY = 1_000_000
#: Booking dates: not before the ledger's opening (or this day when none is given), not
#: more than this many days past today (a clock a day ahead, a different time zone).
EARLIEST_BOOKING = date(2000, 1, 1)
FUTURE_MARGIN_DAYS = 1
#: Cure quarters: none before this year (older rubber is past every ISO 2230 period).
EARLIEST_CURE_YEAR = 1990
#: Fill rates accepted, as a fraction (or 50-99.9 as a percentage).
FILL_LOW, FILL_HIGH = 0.5, 0.999

#: Column lengths of the codes and texts typed by people (``VARCHAR(n)`` in core/tables.py;
#: tests/test_parse.py checks these against the tables).
MAX_LEN = {
    "part": 64,  # part.code
    "lot": 48,  # lot.code
    "job": 64,  # movement.reference (a job or order reference)
    "job ref": 32,  # service_job.ref
    "reason": 200,  # movement.reason
    "location": 32,  # location.code
    "supplier": 32,  # supplier.code
    "fork": 32,  # fork_family.code
    "order": 64,  # movement.reference
    "code": 64,  # any code: the longest code column (part.code)
}

_ASCII_DIGIT = frozenset("0123456789")


# ------------------------------------------------------------------------------ helpers

def _show(value: Any) -> str:
    """The value as an error shows it: text quoted (cut at 40 characters), numbers bare."""
    if not isinstance(value, str):
        return repr(value) if isinstance(value, float) else str(value)
    s = value if len(value) <= 40 else value[:37] + "..."
    return repr(s)


def _a(what: str) -> str:
    return ("an " if what[:1].lower() in "aeiou" else "a ") + what


def _err(value: Any, expected: str) -> ValueError:
    """The one error form every entry point shows: ``expected ..., got 'value'``."""
    return ValueError(f"expected {expected}, got {_show(value)}")


def check_ascii_digits(text: str, what: str = "number") -> str:
    """``text`` unchanged, or ``ValueError`` if it holds a digit that is not 0-9."""
    for ch in text:
        if (ch.isdigit() or unicodedata.category(ch) == "Nd") and ch not in _ASCII_DIGIT:
            raise _err(text, f"{_a(what)} in the digits 0-9 (found "
                             f"{unicodedata.name(ch, 'a non-ASCII digit')})")
    return text


_GROUPED = re.compile(r"^\d{1,3}(?:([ ,.'\u00a0\u202f])\d{3})(?:\1\d{3})*$")


def number_text(value: Any, what: str = "number") -> str:
    """The canonical decimal text (``-1234.5``) of a typed number, by the rules above."""
    raw = str(value).strip()
    check_ascii_digits(raw, what)
    s = raw.replace("\u00a0", " ").replace("\u202f", " ")
    sign = ""
    if s[:1] in "+-":
        sign, s = ("-" if s[0] == "-" else ""), s[1:].lstrip()
    if not s or not re.fullmatch(r"[0-9 ,.']+", s) or not any(c.isdigit() for c in s):
        raise _err(raw, _a(what))
    dec = None
    if "," in s and "." in s:
        dec = "," if s.rfind(",") > s.rfind(".") else "."
    elif s.count(",") == 1 and "." not in s:
        dec = ","
    elif s.count(".") == 1 and "," not in s:
        dec = "."
    whole, frac = (s.rsplit(dec, 1) if dec else (s, ""))
    if dec == "," and re.fullmatch(r"\d{3}", frac) and whole.strip() not in ("", "0") \
            and "." not in whole:
        raise _err(raw, f"{_a(what)} without a comma before three digits (it could be a "
                   "decimal comma or a thousands separator: write 5000 for five thousand, "
                   "5.000 for five)")
    if not re.fullmatch(r"\d*", frac) or (dec and not frac and not whole):
        raise _err(raw, _a(what))
    whole = whole.strip()
    if not whole:
        whole = "0"
    if not whole.isdigit():
        if not _GROUPED.match(whole):
            raise _err(raw, f"{_a(what)} with thousands grouped in threes (1 234 or 1234)")
        whole = re.sub(r"\D", "", whole)
    return f"{sign}{whole}" + (f".{frac}" if frac else "")


def _finite_float(value: Any, what: str) -> float:
    if isinstance(value, bool):
        raise _err(value, f"{_a(what)}")
    if isinstance(value, int | float | Decimal):
        f = float(value)
    else:
        f = float(number_text(value, what))
    if not math.isfinite(f):
        raise _err(value, f"a finite {what}")
    return f
