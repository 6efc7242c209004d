"""The month-end report's plain records: the calendar :class:`Month` (and the parsing of
a complete month), and the figures :func:`inventory.monthend.aggregates.load_month` reads
for it (:class:`MonthData` and its rows). Pure: no database library."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from datetime import UTC, date, datetime, timedelta
from decimal import Decimal

from inventory.core import parse
from inventory.core.errors import InventoryError

ZERO = Decimal("0")
KNOWN_KINDS = ("receipt", "issue", "adjust", "count", "move")
METHODS = {"fifo": "FIFO by cure date (lot cost, as the ledger issues)",
           "average": "moving average"}
HISTORY_MONTHS = 12

# ---------------------------------------------------------------------------- months


@dataclass(frozen=True, slots=True, order=True)
class Month:
    """A calendar month; its movements are those with ``start <= ts < end`` (UTC)."""

    year: int
    month: int

    @property
    def label(self) -> str:
        return f"{self.year:04d}-{self.month:02d}"

    @property
    def first_day(self) -> date:
        return date(self.year, self.month, 1)

    @property
    def last_day(self) -> date:
        return self.shift(1).first_day - timedelta(days=1)

    @property
    def days(self) -> int:
        return self.last_day.day

    @property
    def start(self) -> datetime:
        return datetime(self.year, self.month, 1, tzinfo=UTC)

    @property
    def end(self) -> datetime:
        return self.shift(1).start

    def shift(self, months: int) -> Month:
        m = self.month - 1 + months
        return Month(self.year + m // 12, m % 12 + 1)

    @classmethod
    def of(cls, day: date) -> Month:
        return cls(day.year, day.month)

    def __str__(self) -> str:
        return self.label


def parse_month(text: str, *, today: date) -> Month:
    """A complete month from ``YYYY-MM`` (or what :func:`inventory.core.parse.month` reads:
    ``03/2026``, ``Mar 2026``); refuses malformed text, the running month and months in the
    future with a one-line message."""
    try:
        year, mo = parse.month(text)
    except ValueError as exc:
        raise InventoryError(f"month: {exc}",
                             hint=f"the last complete month is {last_complete(today)}") from None
    month = Month(year, mo)
    if month.first_day > today:
        raise InventoryError(f"month {month} is in the future (today is {today.isoformat()})",
                             hint=f"the last complete month is {last_complete(today)}")
    if month.last_day >= today:
        raise InventoryError(f"month {month} is not over yet (today is {today.isoformat()})",
                             hint=f"the last complete month is {last_complete(today)}")
    return month


def last_complete(today: date) -> Month:
    """The month before the one ``today`` falls in."""
    return Month.of(today).shift(-1)


# ---------------------------------------------------------------------------- records


@dataclass(frozen=True, slots=True)
class PartMonth:
    """One part's month. Quantities in the part's unit; out-flows (issues) are positive
    numbers, adjustments and count variances are signed. Values at cost (see ``method``).

    ``opening_lot_value``/``closing_lot_value`` price each lot's balance at the lot's own
    cost: under FIFO they must equal the movement-priced values, which is how a movement
    booked at the wrong cost shows up. ``negative_lots`` counts lots standing below zero at
    the start or the end. ``cached_qty`` is the cached balance when no movement follows the
    month (else ``None``), an independent check of the closing quantity.
    """

    part: str
    description: str
    kind: str
    material: str | None
    unit: str
    opening_qty: int
    opening_value: Decimal
    receipts_qty: int
    receipts_value: Decimal
    job_issues_qty: int
    job_issues_value: Decimal
    other_issues_qty: int
    other_issues_value: Decimal
    adjust_qty: int
    adjust_value: Decimal
    count_qty: int
    count_value: Decimal
    move_qty: int
    move_value: Decimal
    unknown_qty: int
    unknown_value: Decimal
    closing_qty: int
    closing_value: Decimal
    opening_lot_value: Decimal
    closing_lot_value: Decimal
    negative_lots: int = 0
    cached_qty: int | None = None
    last_issue: date | None = None
    first_in: date | None = None
    usage_qty: tuple[int, ...] = ()  # issues per month, oldest first, the report month last
    usage_value: tuple[Decimal, ...] = ()
    month_end_values: tuple[Decimal, ...] = ()  # 13 points: end of month-12 ... end of month

    @property
    def issues_qty(self) -> int:
        return self.job_issues_qty + self.other_issues_qty

    @property
    def issues_value(self) -> Decimal:
        return self.job_issues_value + self.other_issues_value

    @property
    def adjustments_value(self) -> Decimal:
        """Everything that is neither a receipt nor an issue: adjustments, count variances,
        the net of transfers (zero) and movements of kinds the report does not know."""
        return self.adjust_value + self.count_value + self.move_value + self.unknown_value


@dataclass(frozen=True, slots=True)
class LotOnHand:
    part: str
    material: str | None
    lot: str
    cured: str
    received: date
    extended_until: date | None
    qty: int
    unit_cost: Decimal

    @property
    def value(self) -> Decimal:
        return self.qty * self.unit_cost


@dataclass(frozen=True, slots=True)
class ForkUsage:
    fork_family: str
    service_level: str
    jobs: int
    units: int
    value: Decimal


@dataclass(frozen=True, slots=True)
class SupplyTerms:
    supplier: str
    lead_days: int
    review_days: int
    pack: int
    minimum: int


@dataclass(frozen=True, slots=True)
class MonthData:
    """Everything the report needs, as plain records (no session attached)."""

    month: Month
    method: str
    parts: tuple[PartMonth, ...]
    history: tuple[Month, ...]  # the twelve months ending with ``month``
    job_usage_value: tuple[Decimal, ...]  # per history month, all parts
    other_usage_value: tuple[Decimal, ...]
    lots: tuple[LotOnHand, ...]
    fork_usage: tuple[ForkUsage, ...]
    supply: Mapping[str, SupplyTerms] = field(default_factory=dict)
    on_order: Mapping[str, int] = field(default_factory=dict)
    broken: Mapping[str, str] = field(default_factory=dict)  # part -> why (moving average)
