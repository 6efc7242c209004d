"""What a booking says: one frozen record per ledger operation (pure).

The ledger's functions take one of these instead of a dozen keyword arguments; the faces
build them through :mod:`inventory.stock.service`. ``ts`` is the booking's moment (default
now), ``user`` who booked it (default :func:`inventory.stock.ledger.current_user`),
``batch_id`` the import batch it belongs to.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date, datetime
from decimal import Decimal

DEFAULT_LOCATION = "MAIN"


@dataclass(frozen=True, slots=True)
class Stamp:
    """When, by whom and why a movement is written (the columns every movement carries)."""

    ts: datetime | None = None
    user: str | None = None
    reference: str | None = None
    reason: str | None = None
    batch_id: int | None = None
    reverses_id: int | None = None


@dataclass(frozen=True, slots=True)
class Receipt:
    """``qty`` units of ``part`` into a lot (an existing lot code adds to it) at ``location``;
    ``unit_cost`` defaults to the part's last lot, then its cheapest supplier item."""

    part: str
    qty: int
    unit_cost: Decimal | str | None = None
    lot: str | None = None
    cured: str | None = None
    location: str = DEFAULT_LOCATION
    received: date | None = None
    supplier: str | None = None
    ts: datetime | None = None
    reference: str | None = None
    user: str | None = None
    batch_id: int | None = None


@dataclass(frozen=True, slots=True)
class Issue:
    """``qty`` units of ``part`` out, oldest cure first (only from ``location`` if given);
    ``inspected`` lets lots past their ISO 2230 storage limit be used."""

    part: str
    qty: int
    location: str | None = None
    reference: str | None = None
    ts: datetime | None = None
    user: str | None = None
    reason: str | None = None
    batch_id: int | None = None
    inspected: bool = False


@dataclass(frozen=True, slots=True)
class Adjustment:
    """A signed correction of ``part`` at ``location`` with a reason; units added go to the
    newest lot, or to a new lot at ``unit_cost``."""

    part: str
    qty: int
    reason: str
    location: str = DEFAULT_LOCATION
    ts: datetime | None = None
    user: str | None = None
    unit_cost: Decimal | str | None = None


@dataclass(frozen=True, slots=True)
class Count:
    """``counted`` units of ``part`` found on the shelf at ``location``."""

    part: str
    counted: int
    location: str = DEFAULT_LOCATION
    ts: datetime | None = None
    user: str | None = None
    reference: str | None = None
    batch_id: int | None = None
