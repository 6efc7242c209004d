"""Cell parsers: one function per type, each raising ``ValueError`` whose text says what
was expected. The sheet reader adds file, sheet, row and column. Every number, amount,
date, cure quarter and code goes through :mod:`inventory.core.parse`, the same parsers the
command line and the web forms use."""

from __future__ import annotations

import math
from collections.abc import Callable
from datetime import date
from decimal import Decimal
from typing import Any

from inventory.core import parse

Parser = Callable[[Any], Any]


def is_blank(value: Any) -> bool:
    return value is None or (isinstance(value, str) and not value.strip()) or (
        isinstance(value, float) and math.isnan(value)
    )


def text(value: Any) -> str:
    """Text of a cell. A leading apostrophe that our csv writer put before formula-like text
    is removed again, so export and import round-trip."""
    if isinstance(value, float) and value.is_integer():
        value = int(value)
    out = str(value).strip()
    if len(out) > 1 and out[0] == "'" and out[1] in "=+-@":
        out = out[1:]
    return out


def code(value: Any) -> str:
    """A code (part, lot, supplier, ...): printable characters only, at most 64 long (the
    longest code column); :func:`inventory.core.parse.code`."""
    return parse.code(text(value), what="code")


def integer(value: Any) -> int:
    return parse.integer(value)


def positive_int(value: Any) -> int:
    return parse.quantity(value)


def nonneg_int(value: Any) -> int:
    return parse.quantity(value, zero=True)


def number(value: Any) -> float:
    return parse.number(value)


def positive_number(value: Any) -> float:
    f = number(value)
    if f <= 0:
        raise ValueError(f"expected a number above 0, got {value!r}")
    return f


def nonneg_number(value: Any) -> float:
    f = number(value)
    if f < 0:
        raise ValueError(f"expected a number, 0 or more, got {value!r}")
    return f


def money(value: Any) -> Decimal:
    return parse.money(value)


def iso_date(value: Any) -> date:
    """A date as a spreadsheet gives it (a date cell, a serial number) or as text
    (:func:`inventory.core.parse.day`: ISO 8601, unambiguous day/month, month names)."""
    if isinstance(value, str):
        value = text(value)
    return parse.day(value)


def quarter(value: Any) -> str:
    """A cure quarter (:func:`inventory.core.parse.cure_quarter`: 2026Q3, 3Q26, month 8/26;
    1990 to the current quarter)."""
    return parse.cure_quarter(text(value))


def choice(*options: str) -> Parser:
    allowed = {o.lower(): o for o in options}

    def parse(value: Any) -> str:
        s = text(value).lower().replace(" ", "_").replace("-", "_")
        if s not in allowed:
            raise ValueError(f"expected one of {', '.join(options)}, got {text(value)!r}")
        return allowed[s]

    parse.__name__ = "choice"
    return parse
