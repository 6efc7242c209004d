"""Command-line options read through the one parser per kind of value
(:mod:`inventory.core.parse`): each function takes the option's text (``None`` when it was
not given) and the option's name, and returns the value or raises a one-line
:class:`InventoryError` ``--option: expected ..., got '...'``. The same texts give the same
values in spreadsheet cells (:mod:`inventory.sheets.cells`) and web forms."""

from __future__ import annotations

from collections.abc import Callable
from datetime import UTC, date, datetime, time
from decimal import Decimal
from typing import Any, TypeVar

from inventory.core.errors import InventoryError

T = TypeVar("T")


def read(option: str, fn: Callable[..., T], text: Any, **kw: Any) -> T:
    """``fn(text, **kw)`` with a ``ValueError`` turned into ``option: message``."""
    try:
        return fn(text, **kw)
    except ValueError as exc:
        raise InventoryError(f"{option}: {exc}") from None


def cost(text: str | None, option: str = "--cost", *, confirmed: bool = False) -> Decimal | None:
    """A unit cost; above the ceiling only with ``--cost-ok``."""
    from inventory.core import parse

    if text is None:
        return None
    return read(option, parse.unit_cost, text, confirmed=confirmed)


def amount(text: str | None, option: str) -> Decimal | None:
    """An amount of money (a budget, an order cost): no ceiling but what the database holds."""
    from inventory.core import parse

    if text is None:
        return None
    return read(option, parse.money, text)


def day(text: str | None, option: str = "--date") -> date | None:
    """Any calendar date (a plan date, a season start): no booking bounds."""
    from inventory.core import parse

    if not text:
        return None
    return read(option, parse.day, text)


def booking_day(text: str | None, option: str = "--date", *,
                today: date | None = None) -> date | None:
    """A booking date: from 2000-01-01 to today + a day."""
    from inventory.core import parse

    if not text:
        return None
    return read(option, parse.booking_day, text, today=today)


def booking_ts(text: str | None, option: str = "--date") -> datetime | None:
    """Midday UTC of a booking date (so the booking lands in that day's month)."""
    d = booking_day(text, option)
    return None if d is None else datetime.combine(d, time(12, 0), tzinfo=UTC)


def fill_rate(text: str | float | None, option: str = "--fill-rate") -> float | None:
    from inventory.core import parse

    if text is None:
        return None
    return read(option, parse.fill_rate, text)


def percent(text: str | float | None, option: str, *, low: float = 0.0,
            high: float = 1.0) -> float | None:
    from inventory.core import parse

    if text is None:
        return None
    return read(option, parse.percent, text, low=low, high=high)


def cure(text: str | None, option: str = "--cured", *,
         received: date | None = None) -> str | None:
    from inventory.core import parse

    if text is None:
        return None
    return read(option, parse.cure_quarter, text, received=received)


def code(text: str | None, option: str, what: str) -> str | None:
    """A code or short text (``what``: part, lot, job, reason, location, order)."""
    from inventory.core import parse

    if text is None:
        return None
    return read(option, parse.code, text, what=what)


def number(value: float | str, option: str, *, low: float | None = None,
           high: float | None = None) -> float:
    """A finite number within ``[low, high]`` (``nan`` and ``inf`` refused)."""
    from inventory.core import parse

    return read(option, parse.number, value, low=low, high=high)


def quantity(value: int | str, option: str, *, signed: bool = False,
             zero: bool = False) -> int:
    from inventory.core import parse

    return read(option, parse.quantity, value, signed=signed, zero=zero)
