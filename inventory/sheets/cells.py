"""Cell parsers: one function per type, each raising ``ValueError`` whose text says what
was expected. The sheet reader adds file, sheet, row and column."""

from __future__ import annotations

import math
from collections.abc import Callable
from datetime import date, datetime
from decimal import Decimal, InvalidOperation
from typing import Any

from inventory.core.cure import parse_quarter

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
    out = text(value)
    if len(out) > 64 and len(out.split()) > 1:
        raise ValueError(f"expected a short code, got {out!r}")
    return out


def _number_text(value: Any) -> str:
    s = str(value).strip().replace("\u00a0", "").replace(" ", "")
    if s.count(",") == 1 and "." not in s:
        s = s.replace(",", ".")  # decimal comma
    return s


def integer(value: Any) -> int:
    if isinstance(value, bool):
        raise ValueError(f"expected a whole number, got {value!r}")
    if isinstance(value, int):
        return value
    if isinstance(value, float):
        if value.is_integer():
            return int(value)
        raise ValueError(f"expected a whole number, got {value!r}")
    s = _number_text(value)
    try:
        f = float(s)
    except ValueError:
        raise ValueError(f"expected a whole number, got {str(value)!r}") from None
    if not f.is_integer():
        raise ValueError(f"expected a whole number, got {str(value)!r}")
    return int(f)


def positive_int(value: Any) -> int:
    n = integer(value)
    if n <= 0:
        raise ValueError(f"expected a whole number above 0, got {n}")
    return n


def nonneg_int(value: Any) -> int:
    n = integer(value)
    if n < 0:
        raise ValueError(f"expected a whole number, 0 or more, got {n}")
    return n


def number(value: Any) -> float:
    if isinstance(value, bool):
        raise ValueError(f"expected a number, got {value!r}")
    if isinstance(value, int | float):
        f = float(value)
    else:
        try:
            f = float(_number_text(value))
        except ValueError:
            raise ValueError(f"expected a number, got {str(value)!r}") from None
    if not math.isfinite(f):
        raise ValueError(f"expected a finite number, got {value!r}")
    return f


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
    if isinstance(value, float):
        value = repr(value)
    s = _number_text(value).lstrip("€$£")
    try:
        d = Decimal(s)
    except InvalidOperation:
        raise ValueError(f"expected an amount of money like 12.50, got {str(value)!r}") from None
    if not d.is_finite() or d < 0:
        raise ValueError(f"expected an amount of money, 0 or more, got {str(value)!r}")
    return d


def iso_date(value: Any) -> date:
    """A date as a spreadsheet gives it (a date cell) or ISO 8601 text ``YYYY-MM-DD``."""
    if isinstance(value, datetime):
        return value.date()
    if isinstance(value, date):
        return value
    s = text(value)
    try:
        return date.fromisoformat(s[:10])
    except ValueError:
        raise ValueError(f"expected a date like 2026-03-31, got {s!r}") from None


def quarter(value: Any) -> str:
    return parse_quarter(text(value))


def choice(*options: str) -> Parser:
    allowed = {o.lower(): o for o in options}

    def parse(value: Any) -> str:
        s = text(value).lower().replace(" ", "_").replace("-", "_")
        if s not in allowed:
            raise ValueError(f"expected one of {', '.join(options)}, got {text(value)!r}")
        return allowed[s]

    parse.__name__ = "choice"
    return parse
