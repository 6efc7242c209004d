"""The month-end report's records (pure): a part's month with its derived figures, the
lots near their storage limit, the parts below their reorder point, the totals, the report
itself and the settings it was assembled with (:func:`inventory.monthend.report.assemble`)."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from datetime import date
from decimal import Decimal

from inventory.monthend.records import METHODS, ForkUsage, LotOnHand, Month, PartMonth


@dataclass(frozen=True, slots=True)
class PartLine:
    """A part's month with the derived figures."""

    data: PartMonth
    turns: float | None  # the month's, annualised
    turns_12m: float | None
    days_of_supply: float | None
    annual_usage_value: Decimal
    abc: str
    xyz: str
    cv: float | None
    status: str | None  # "slow", "dead" or None

    def __getattr__(self, name):  # plain access to the month's fields
        return getattr(self.data, name)


@dataclass(frozen=True, slots=True)
class ExpiringLot:
    lot: LotOnHand
    limit: date
    status: str  # "past" or "soon"


@dataclass(frozen=True, slots=True)
class BelowReorder:
    part: str
    description: str
    on_hand: int
    on_order: int
    reorder_point: int
    suggested_qty: int
    unit_cost: Decimal | None
    basis: str


@dataclass(frozen=True, slots=True)
class Totals:
    opening_value: Decimal
    receipts_value: Decimal
    job_issues_value: Decimal
    other_issues_value: Decimal
    adjust_value: Decimal
    count_value: Decimal
    closing_value: Decimal
    turns: float | None
    turns_12m: float | None
    days_of_supply: float | None
    slow_value: Decimal
    dead_value: Decimal
    expired_value: Decimal
    expiring_soon_value: Decimal
    count_loss_value: Decimal
    count_gain_value: Decimal
    parts_on_hand: int
    jobs: int

    @property
    def issues_value(self) -> Decimal:
        return self.job_issues_value + self.other_issues_value

    @property
    def adjustments_value(self) -> Decimal:
        """Adjustments plus count variances (plus the zero net of transfers)."""
        return self.closing_value - self.opening_value - self.receipts_value + self.issues_value


@dataclass(frozen=True, slots=True)
class MonthReport:
    month: Month
    method: str
    today: date
    totals: Totals
    parts: tuple[PartLine, ...]
    history: tuple[Month, ...]
    job_usage_value: tuple[Decimal, ...]
    other_usage_value: tuple[Decimal, ...]
    stock_value: tuple[Decimal, ...]  # month-end stock value for each history month
    fork_usage: tuple[ForkUsage, ...]
    expiring_lots: tuple[ExpiringLot, ...]
    below_reorder: tuple[BelowReorder, ...]
    settings: Mapping[str, object] = field(default_factory=dict)

    @property
    def method_label(self) -> str:
        return METHODS[self.method]

    @property
    def stock_problems(self) -> tuple[PartLine, ...]:
        """Dead stock, then slow stock, each highest value first."""
        rows = [p for p in self.parts if p.status]
        return tuple(sorted(rows, key=lambda p: (p.status != "dead", -p.closing_value, p.part)))

    @property
    def count_variances(self) -> tuple[PartLine, ...]:
        rows = [p for p in self.parts if p.count_qty]
        return tuple(sorted(rows, key=lambda p: (p.count_value, p.part)))

    @property
    def abc_order(self) -> tuple[PartLine, ...]:
        return tuple(sorted(self.parts, key=lambda p: (-p.annual_usage_value, p.part)))


@dataclass(frozen=True, slots=True)
class ReportSettings:
    """The report's judgement calls (see :func:`assemble`)."""

    slow_months: int = 6
    dead_months: int = 12
    expiry_warn_months: int = 6
    abc_cuts: tuple[float, float] = (0.80, 0.95)
    xyz_cuts: tuple[float, float] = (0.5, 1.0)
    cover_days: float = 30.0
    max_listed: int = 20
