"""Reading a web form: each field through the one parser of its kind in ``inventory.core.parse``
(the command line's bounds and messages); a bad value becomes a :class:`FormError` shown
beside its field.
"""

from __future__ import annotations

from datetime import date
from decimal import Decimal

from inventory.core import parse
from inventory.core.errors import InventoryError
from inventory.core.model import ServiceLevel

SERVICE_LEVELS = tuple(level.value for level in ServiceLevel)
STALE_FORM = "this form was stale or altered, so nothing was saved: reload the page"


class FormError(Exception):
    """Bad input for one field of a form: shown beside that field."""

    def __init__(self, field: str, message: str) -> None:
        super().__init__(message)
        self.field, self.message = field, message


def field_of(exc: InventoryError, default: str, fields: dict[str, str] | None = None) -> str:
    """Which form field an error is about: the option its message names (``--cs: ...``),
    else a word of it (``part``, ``quantity``...), else ``default``."""
    text = str(exc.lines()[0] if exc.lines() else exc).lower()
    for opt, name in (fields or {}).items():
        if text.startswith(opt) or f"{opt}:" in text or f"{opt} " in text:
            return name
    if exc.problems and exc.problems[0].kind == "shortage":
        return "qty" if "qty" in (fields or {}).values() or default == "qty" else default
    for word, name in (("unknown part", "part"), ("unknown location", "location"),
                       ("unknown fork", "fork"), ("quantity", "qty"), ("not enough", "qty"),
                       ("short", "qty"), ("reason", "reason"), ("cost", "cost")):
        if word in text and name in (fields or {}).values():
            return name
    return default


def message_of(exc: InventoryError) -> str:
    lines = exc.lines()
    text = lines[0] if lines else str(exc)
    if exc.hint and len(exc.problems) <= 1:
        text = f"{text} ({exc.hint})"
    return text


def int_field(form, name: str, *, minimum: int | None = None, signed: bool = False) -> int:
    """A whole number from a form, read by the one quantity parser (the CLI's and the
    imports' bounds: ASCII digits, at most a million in one booking)."""
    raw = str(form.get(name, "")).strip()
    if not raw:
        raise FormError(name, "a whole number is needed here")
    try:
        return parse.quantity(raw, signed=signed, zero=minimum == 0 and not signed)
    except ValueError as exc:
        raise FormError(name, str(exc)) from None


def rows_field(form, name: str, most: int) -> int:
    """How many rows a page carries in its hidden fields (a count sheet's lines, an
    import's fork decisions): 0 to ``most``. Anything else is a stale or altered form."""
    try:
        return parse.quantity(str(form.get(name) or "0").strip(), what=name, zero=True,
                              max_qty=most)
    except ValueError:
        raise FormError(name, STALE_FORM) from None


def money_field(form, name: str) -> Decimal | None:
    """A unit cost from a form, read by the one money parser (finite, four places, the
    column's limit and the unit-cost ceiling)."""
    raw = str(form.get(name, "")).strip()
    if not raw:
        return None
    try:
        return parse.unit_cost(raw, confirm_hint="a manager books it from the command line "
                                                 "with --cost-ok")
    except ValueError as exc:
        raise FormError(name, str(exc)) from None


def text_field(form, name: str) -> str | None:
    """A code or short text from a form: no control or bidirectional characters, capped at
    its column's length (the one code parser, as on the command line)."""
    raw = str(form.get(name, "") or "").strip()
    if not raw:
        return None
    base = name.split("-")[-1].rstrip("0123456789") if "-" in name else name.rstrip("0123456789")
    try:
        return parse.code(raw, what=base if base in parse.MAX_LEN else "code")
    except ValueError as exc:
        raise FormError(name, str(exc)) from None


def day_field(raw: str | None, name: str, *, booking: bool = False) -> date | None:
    """A date from a form through the one date parser; a booking date also within the
    ledger's bounds (not before 2000, not past tomorrow)."""
    if not raw:
        return None
    try:
        return parse.booking_day(raw, what=name) if booking else parse.day(raw, what=name)
    except ValueError as exc:
        raise FormError(name, str(exc)) from None


def blank(v):
    v = None if v is None else str(v).strip()
    return v or None


def fork_and_level(form, *, fork_hint: str = "pick the fork family") -> tuple[str, str]:
    """The fork family and service level a job form names, each checked at its field."""
    fork = text_field(form, "fork")
    if not fork:
        raise FormError("fork", fork_hint)
    level = text_field(form, "service") or ""
    if level not in SERVICE_LEVELS:
        raise FormError("service", f"pick a service level ({', '.join(SERVICE_LEVELS)})")
    return fork, level
