"""Lengths typed at the bench, in millimetres or inches, and shown back in either.

A technician reads a caliper in whatever unit it is set to, and old seal tables are in
inches, so every dimension the tool accepts goes through :func:`parse_length`. Inside the
program a length is always a float in millimetres; :func:`format_length` turns it back into
text in the unit the user asked for.

Accepted forms (spaces optional between number and unit)::

    32   32mm   32 mm   31,5   3.2cm   1.26in   1.26"   1-1/4in   1 1/4 in   3/8in

Errors are :class:`ValueError` with a one-line message; the CLI adds the option name.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from fractions import Fraction

MM_PER_INCH = 25.4  # exact by definition (international inch, 1959)

#: Unit words accepted after a number, mapped to millimetres per unit.
UNIT_WORDS: dict[str, float] = {
    "mm": 1.0,
    "millimetre": 1.0,
    "millimetres": 1.0,
    "millimeter": 1.0,
    "millimeters": 1.0,
    "cm": 10.0,
    "in": MM_PER_INCH,
    "inch": MM_PER_INCH,
    "inches": MM_PER_INCH,
    '"': MM_PER_INCH,
    "\u2033": MM_PER_INCH,  # double prime
    "''": MM_PER_INCH,
}

#: Units :func:`format_length` can write, with the decimals shown by default: 0.01 mm is the
#: resolution of a digital caliper; 0.001 in is how inch seal tables are printed.
DISPLAY_UNITS: dict[str, tuple[float, int, str]] = {
    "mm": (1.0, 2, "mm"),
    "in": (MM_PER_INCH, 3, "in"),
}

_DEC = r"\d+(?:[.,]\d*)?|[.,]\d+"
_NUMBER = re.compile(
    rf"""^\s*
    (?:
        (?P<whole>\d+)(?:\s*-\s*|\s+)(?P<num>\d+)\s*/\s*(?P<den>\d+)   # 1-1/4, 1 1/4
      | (?P<fnum>\d+)\s*/\s*(?P<fden>\d+)                               # 3/8
      | (?P<dec>{_DEC})                                                  # 32, 31.5, 31,5
    )
    \s*(?P<unit>[^\d\s].*?)?\s*$""",
    re.VERBOSE,
)
_GROUPED = re.compile(r"\d[.,]\d*[.,]")  # 1,234.5 or 1.234,5: ambiguous, refused


@dataclass(frozen=True, slots=True)
class Length:
    """A parsed length: the value in mm, the unit it was read in, and whether the text named
    that unit (``explicit=False`` means the caller's default unit was assumed)."""

    mm: float
    unit: str
    explicit: bool


def _unit_factor(unit: str) -> float:
    key = unit.strip().lower()
    if key not in UNIT_WORDS:
        known = ", ".join(sorted({"mm", "cm", "in", '"'}))
        raise ValueError(f"unknown length unit {unit.strip()!r}: use one of {known}")
    return UNIT_WORDS[key]


def read_length(text: str | float | int, default_unit: str = "mm") -> Length:
    """Parse ``text`` into a :class:`Length`; a bare number is taken in ``default_unit``.

    Raises ``ValueError`` for empty text, an unknown unit, a malformed number (including a
    thousands separator such as ``1,234.5``), or a length that is zero or negative.
    """
    default_factor = _unit_factor(default_unit)
    if isinstance(text, bool):
        raise ValueError(f"not a length: {text!r}")
    if isinstance(text, int | float):
        value = float(text)
        _check_positive(value, str(text))
        return Length(value * default_factor, default_unit.strip().lower(), False)
    raw = str(text)
    stripped = raw.strip()
    if not stripped:
        raise ValueError("empty length: give a number such as 32, 32mm or 1.26in")
    if any(ch.isdigit() and ch not in "0123456789" for ch in stripped):
        # full-width or Arabic-Indic digits: Python reads them, a person checking would not
        raise ValueError(f"not a length: {stripped!r} (use the digits 0-9)")
    if stripped.startswith("-"):
        raise ValueError(f"length must be positive, got {stripped!r}")
    if _GROUPED.search(stripped):
        raise ValueError(f"not a length: {stripped!r} (use one decimal mark, no grouping)")
    m = _NUMBER.match(stripped)
    if not m:
        raise ValueError(
            f"not a length: {stripped!r} (examples: 32, 32mm, 31,5, 1.26in, 1-1/4in, 3/8in)"
        )
    if m.group("whole") is not None:
        den = int(m.group("den"))
        if den == 0:
            raise ValueError(f"not a length: {stripped!r} (division by zero)")
        value = float(int(m.group("whole")) + Fraction(int(m.group("num")), den))
    elif m.group("fnum") is not None:
        den = int(m.group("fden"))
        if den == 0:
            raise ValueError(f"not a length: {stripped!r} (division by zero)")
        value = float(Fraction(int(m.group("fnum")), den))
    else:
        value = float(m.group("dec").replace(",", "."))
    unit_text = m.group("unit")
    if unit_text:
        factor = _unit_factor(unit_text)
        unit = "in" if factor == MM_PER_INCH else unit_text.strip().lower()
        unit = "mm" if factor == 1.0 else unit
        explicit = True
    else:
        factor, unit, explicit = default_factor, default_unit.strip().lower(), False
    _check_positive(value, stripped)
    return Length(value * factor, unit, explicit)


def _check_positive(value: float, shown: str) -> None:
    if not math.isfinite(value):
        raise ValueError(f"not a length: {shown!r}")
    if value <= 0:
        raise ValueError(f"length must be positive, got {shown!r}")


def parse_length(text: str | float | int, default_unit: str = "mm") -> float:
    """Length in mm from text such as ``"32"``, ``"1.26in"`` or ``"1-1/4in"``.

    A bare number is in ``default_unit`` (millimetres unless the caller says otherwise).
    """
    return read_length(text, default_unit).mm


def to_unit(mm: float, unit: str = "mm") -> float:
    """Convert a length in mm to ``unit`` ("mm" or "in"), unrounded."""
    if unit not in DISPLAY_UNITS:
        raise ValueError(f"unknown display unit {unit!r}: use mm or in")
    return mm / DISPLAY_UNITS[unit][0]


def format_length(mm: float | None, unit: str = "mm", *, decimals: int | None = None,
                  with_unit: bool = True) -> str:
    """Text for a length in mm shown in ``unit``: ``31.50 mm`` or ``1.240 in``.

    ``decimals`` overrides the unit's default (2 for mm, 3 for in). ``None`` gives ``-``.
    The text parses back with :func:`parse_length` to within half the last decimal shown.
    """
    if mm is None or (isinstance(mm, float) and math.isnan(mm)):
        return "-"
    if unit not in DISPLAY_UNITS:
        raise ValueError(f"unknown display unit {unit!r}: use mm or in")
    _, default_decimals, label = DISPLAY_UNITS[unit]
    places = default_decimals if decimals is None else decimals
    text = f"{to_unit(mm, unit):.{places}f}"
    return f"{text} {label}" if with_unit else text


def inch_hint(value_as_typed: float, low_mm: float, high_mm: float) -> str | None:
    """Suggest the inch reading when a bare number is implausible in mm but fits in inches.

    ``value_as_typed`` is the number as the user typed it (taken as mm). Returns a hint such
    as ``did you mean 1.26in (32.00 mm)?`` or ``None`` when the inch reading does not fit
    the plausible range either.
    """
    as_inch_mm = value_as_typed * MM_PER_INCH
    if low_mm <= value_as_typed <= high_mm or not (low_mm <= as_inch_mm <= high_mm):
        return None
    return f"did you mean {value_as_typed:g}in ({as_inch_mm:.2f} mm)?"


def check_range(length: Length | float, low_mm: float, high_mm: float, *, what: str) -> float:
    """Return the length in mm if it lies in ``[low_mm, high_mm]``, else raise ``ValueError``.

    ``what`` names the dimension in the message ("O-ring cross-section"). When ``length``
    is a :class:`Length` typed without a unit and its inch reading would be plausible, the
    message ends with an inch hint. A plain float is treated as explicitly in mm.
    """
    if isinstance(length, Length):
        # only a bare number read as mm can be an inch value typed without its unit
        mm, explicit = length.mm, length.explicit or length.unit != "mm"
    else:
        mm, explicit = float(length), True
    if not math.isfinite(mm) or mm <= 0:
        raise ValueError(f"{what} must be a positive length, got {mm:g} mm")
    if low_mm <= mm <= high_mm:
        return mm
    message = f"{what} {mm:g} mm is outside the plausible {low_mm:g}-{high_mm:g} mm"
    if not explicit:
        hint = inch_hint(mm, low_mm, high_mm)
        if hint:
            message += f"; {hint}"
    raise ValueError(message)
