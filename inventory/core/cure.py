"""Cure dates as the rubber trade labels them: a quarter and a year.

ISO 2230 asks each package to show the quarter and year of vulcanisation, written like
"3/94" (July to September 1994); the trade also writes "3Q94", and makers who stamp the
month write "2/26" for February 2026. ``N/YY`` is read as a MONTH here (``2/26`` -> 2026Q1,
``11/26`` -> 2026Q4): months 5-12 can only be months, and reading an ISO 2230 quarter label
"3/94" as March makes the rubber look older, so its storage limit is flagged early, never
late (the safe side); write ``3Q94`` or ``1994Q3`` for a quarter. We store the canonical
form ``"1994Q3"``, which sorts correctly as text. Digits are ASCII only. Age is counted from the end of the cure quarter
(common practice, see ../shared/REFERENCE.md section 5).
"""

from __future__ import annotations

import re
from datetime import date, timedelta

_FORMS = (
    re.compile(r"^(?P<y>\d{4})\s*-?\s*Q(?P<q>[1-4])$", re.I | re.A),  # 2026Q3, 2026-Q3
    re.compile(r"^Q(?P<q>[1-4])\s*[-/ ]?\s*(?P<y>\d{2}|\d{4})$", re.I | re.A),  # Q3/26
    re.compile(r"^(?P<q>[1-4])\s*Q\s*(?P<y>\d{2}|\d{4})$", re.I | re.A),  # 3Q26, 3Q2026
    re.compile(r"^(?P<m>\d{1,2})\s*/\s*(?P<y>\d{2}|\d{4})$", re.A),  # 2/26: MONTH/year
)

EXPECTED = "a cure quarter like 2026Q3 (also 3Q26, Q3/26, or the month 8/26)"


def parse_quarter(text: str, *, pivot: int = 70) -> str:
    """Canonical ``YYYYQn`` from the trade's ways of writing a cure quarter.

    Two-digit years below ``pivot`` are 20xx, the rest 19xx. Raises ``ValueError`` naming
    what was expected.
    """
    raw = str(text).strip()
    for form in _FORMS:
        m = form.match(raw)
        if m:
            y = int(m.group("y"))
            if y < 100:
                y += 2000 if y < pivot else 1900
            if "m" in m.groupdict():
                month = int(m.group("m"))
                if not 1 <= month <= 12:
                    raise ValueError(f"bad cure date {raw!r}: there is no month {month}; "
                                     f"expected {EXPECTED}")
                return f"{y:04d}Q{(month - 1) // 3 + 1}"
            return f"{y:04d}Q{int(m.group('q'))}"
    raise ValueError(f"bad cure date {raw!r}: expected {EXPECTED}")


def quarter_start(quarter: str) -> date:
    y, q = int(quarter[:4]), int(quarter[5])
    return date(y, 3 * (q - 1) + 1, 1)


def quarter_end(quarter: str) -> date:
    """Last day of the cure quarter: the day rubber age is counted from."""
    y, q = int(quarter[:4]), int(quarter[5])
    if q == 4:
        return date(y, 12, 31)
    return date(y, 3 * q + 1, 1) - timedelta(days=1)


def quarter_of(day: date) -> str:
    return f"{day.year:04d}Q{(day.month - 1) // 3 + 1}"
