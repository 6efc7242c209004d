"""Cure dates as the rubber trade labels them: a quarter and a year.

ISO 2230 asks each package to show the quarter and year of vulcanisation, written like
"3/94" (July to September 1994); the trade also writes "3Q94". We store the canonical form
``"1994Q3"``, which sorts correctly as text. Age is counted from the end of the cure quarter
(common practice, see ../shared/REFERENCE.md section 5).
"""

from __future__ import annotations

import re
from datetime import date, timedelta

_FORMS = (
    re.compile(r"^(?P<y>\d{4})\s*-?\s*Q(?P<q>[1-4])$", re.I),  # 2026Q3, 2026-Q3
    re.compile(r"^Q(?P<q>[1-4])\s*[-/ ]?\s*(?P<y>\d{2}|\d{4})$", re.I),  # Q3 2026, Q3/26
    re.compile(r"^(?P<q>[1-4])\s*Q\s*(?P<y>\d{2}|\d{4})$", re.I),  # 3Q26, 3Q2026
    re.compile(r"^(?P<q>[1-4])\s*/\s*(?P<y>\d{2}|\d{4})$"),  # 3/26, 3/2026 (ISO 2230 label)
)

EXPECTED = "a cure quarter like 2026Q3 (also written 3/26 or 3Q26)"


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
