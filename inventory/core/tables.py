"""Database tables (SQLModel on SQLAlchemy). The schema is owned by the Alembic migrations
in ``inventory/core/migrations``; these classes must match the head revision (a test checks
that autogenerate finds no difference).

Conventions: money ``Numeric(12, 4)`` as ``Decimal``; quantities integers in the part's unit
(each, ml); lengths in mm as floats; cure dates as the trade labels them, a quarter
``"2026Q3"`` (sorts correctly as text).
"""

from __future__ import annotations

from datetime import date, datetime
from decimal import Decimal

from sqlalchemy import CheckConstraint, Column, Index, Numeric, UniqueConstraint
from sqlmodel import Field, SQLModel

MONEY = Numeric(12, 4)


def money_field(nullable: bool = False, default: Decimal | None = None):
    return Field(default=default, sa_column=Column(MONEY, nullable=nullable))


class Part(SQLModel, table=True):
    __tablename__ = "part"
    id: int | None = Field(default=None, primary_key=True)
    code: str = Field(index=True, unique=True, max_length=64)
    kind: str = Field(max_length=32, index=True)
    description: str = Field(default="", max_length=200)
    # indexed: the bench asks for the parts near a reading and the parts stocked as a
    # standard size (migration 0006)
    id_mm: float | None = Field(default=None, index=True)
    od_mm: float | None = Field(default=None, index=True)
    height_mm: float | None = Field(default=None, index=True)
    cs_mm: float | None = Field(default=None, index=True)
    material: str | None = Field(default=None, max_length=16)
    hardness: int | None = None
    volume_cm3: float | None = None
    unit: str = Field(default="each", max_length=8)
    standard: str | None = Field(default=None, max_length=48, index=True)
    notes: str = Field(default="", max_length=400)


class Supplier(SQLModel, table=True):
    __tablename__ = "supplier"
    id: int | None = Field(default=None, primary_key=True)
    code: str = Field(index=True, unique=True, max_length=32)
    name: str = Field(max_length=120)
    lead_time_days: int = 7
    lead_time_sd_days: float = 0.0
    min_order_value: Decimal = Field(default=Decimal("0"), sa_column=Column(MONEY, nullable=False))
    order_cycle_days: int = 7
    currency: str = Field(default="EUR", max_length=3)


class SupplierItem(SQLModel, table=True):
    __tablename__ = "supplier_item"
    __table_args__ = (
        UniqueConstraint("supplier_id", "part_id", name="uq_supplier_item"),
        CheckConstraint("pack_size >= 1", name="ck_supplier_item_pack"),
        CheckConstraint("min_order_qty >= 0", name="ck_supplier_item_moq"),
    )
    id: int | None = Field(default=None, primary_key=True)
    supplier_id: int = Field(foreign_key="supplier.id", index=True)
    part_id: int = Field(foreign_key="part.id", index=True)
    supplier_code: str = Field(default="", max_length=64)
    unit_cost: Decimal = Field(sa_column=Column(MONEY, nullable=False))
    pack_size: int = 1
    min_order_qty: int = 1
    lead_time_days: int | None = None


class ForkFamily(SQLModel, table=True):
    __tablename__ = "fork_family"
    id: int | None = Field(default=None, primary_key=True)
    code: str = Field(index=True, unique=True, max_length=32)
    description: str = Field(default="", max_length=200)
    stanchion_mm: float
    travel_min_mm: int
    travel_max_mm: int
    spring: str = Field(max_length=24)
    year_from: int
    year_to: int | None = None


class Seat(SQLModel, table=True):
    __tablename__ = "seat"
    __table_args__ = (UniqueConstraint("fork_family_id", "code", name="uq_seat"),)
    id: int | None = Field(default=None, primary_key=True)
    fork_family_id: int = Field(foreign_key="fork_family.id", index=True)
    code: str = Field(max_length=48)
    position: str = Field(max_length=32)
    part_kind: str = Field(max_length=32)
    gland: str = Field(max_length=16)
    motion: str = Field(default="static", max_length=16)
    medium: str = Field(default="oil", max_length=16)
    qty_per_fork: int = 1
    rod_mm: float | None = None
    bore_mm: float | None = None
    groove_mm: float | None = None
    groove_width_mm: float | None = None
    housing_depth_mm: float | None = None
    rod_fit: str | None = Field(default=None, max_length=8)
    bore_fit: str | None = Field(default=None, max_length=8)
    chamber_volume_cm3: float | None = None
    piston_mm: float | None = None
    travel_mm: float | None = None
    set_pressure_bar: float | None = None
    notes: str = Field(default="", max_length=400)


class Kit(SQLModel, table=True):
    """A bill of materials for one service level on one fork family. The kit itself is a
    stockable part of kind ``kit`` (so it can be bought, received and issued whole)."""

    __tablename__ = "kit"
    id: int | None = Field(default=None, primary_key=True)
    part_id: int = Field(foreign_key="part.id", unique=True)
    fork_family_id: int = Field(foreign_key="fork_family.id", index=True)
    service_level: str = Field(max_length=24)
    description: str = Field(default="", max_length=200)


class KitLine(SQLModel, table=True):
    __tablename__ = "kit_line"
    __table_args__ = (
        UniqueConstraint("kit_id", "part_id", name="uq_kit_line"),
        CheckConstraint("qty > 0", name="ck_kit_line_qty"),
    )
    id: int | None = Field(default=None, primary_key=True)
    kit_id: int = Field(foreign_key="kit.id", index=True)
    part_id: int = Field(foreign_key="part.id", index=True)
    qty: int


class Location(SQLModel, table=True):
    __tablename__ = "location"
    id: int | None = Field(default=None, primary_key=True)
    code: str = Field(index=True, unique=True, max_length=32)
    description: str = Field(default="", max_length=200)


class Lot(SQLModel, table=True):
    """A batch of one part as received: cure quarter, receipt date and unit cost."""

    __tablename__ = "lot"
    __table_args__ = (UniqueConstraint("part_id", "code", name="uq_lot"),)
    id: int | None = Field(default=None, primary_key=True)
    part_id: int = Field(foreign_key="part.id", index=True)
    code: str = Field(max_length=48)
    cured: str | None = Field(default=None, max_length=6)  # "2026Q3"
    received: date
    unit_cost: Decimal = Field(sa_column=Column(MONEY, nullable=False))
    supplier_id: int | None = Field(default=None, foreign_key="supplier.id")
    extended_until: date | None = None  # inspected and extended per ISO 2230


class Movement(SQLModel, table=True):
    """One line of the append-only stock ledger. Never updated or deleted."""

    __tablename__ = "movement"
    __table_args__ = (
        Index("ix_movement_part_ts", "part_id", "ts"),
        CheckConstraint("qty <> 0", name="ck_movement_nonzero"),
    )
    id: int | None = Field(default=None, primary_key=True)
    ts: datetime = Field(index=True)
    part_id: int = Field(foreign_key="part.id")
    location_id: int = Field(foreign_key="location.id", index=True)
    lot_id: int = Field(foreign_key="lot.id", index=True)
    qty: int  # signed: + in, - out
    kind: str = Field(max_length=16, index=True)  # receipt, issue, adjust, count, move
    unit_cost: Decimal = Field(sa_column=Column(MONEY, nullable=False))
    reference: str | None = Field(default=None, max_length=64, index=True)
    reason: str | None = Field(default=None, max_length=200)
    user: str | None = Field(default=None, max_length=64)
    batch_id: int | None = Field(default=None, foreign_key="import_batch.id")
    # A correction points at the movement it undoes (a reversal, a return or a void); the
    # pair nets to zero, nothing is edited.
    reverses_id: int | None = Field(default=None, foreign_key="movement.id", index=True)


class StockBalance(SQLModel, table=True):
    """Cached on-hand per part, location and lot; written in the same transaction as the
    movement that changes it, re-derivable from the ledger, never negative (the database
    enforces it)."""

    __tablename__ = "stock_balance"
    __table_args__ = (
        UniqueConstraint("part_id", "location_id", "lot_id", name="uq_stock_balance"),
        CheckConstraint("qty >= 0", name="ck_stock_balance_nonnegative"),
    )
    id: int | None = Field(default=None, primary_key=True)
    part_id: int = Field(foreign_key="part.id", index=True)
    location_id: int = Field(foreign_key="location.id")
    lot_id: int = Field(foreign_key="lot.id")
    qty: int = 0


class ServiceJob(SQLModel, table=True):
    __tablename__ = "service_job"
    id: int | None = Field(default=None, primary_key=True)
    ref: str = Field(index=True, unique=True, max_length=32)
    day: date = Field(index=True)
    fork_family_id: int = Field(foreign_key="fork_family.id", index=True)
    service_level: str = Field(max_length=24)
    ride_hours: int | None = None
    fork_ref: str | None = Field(default=None, max_length=32, index=True)
    batch_id: int | None = Field(default=None, foreign_key="import_batch.id")
    # Set by inventory.stock.returns.void_job with its correction movements (migration
    # 0007): a voided job stays on record but no job count includes it.
    voided_at: datetime | None = None
    void_reason: str | None = Field(default=None, max_length=200)


class JobLine(SQLModel, table=True):
    __tablename__ = "job_line"
    __table_args__ = (CheckConstraint("qty > 0", name="ck_job_line_qty"),)
    id: int | None = Field(default=None, primary_key=True)
    job_id: int = Field(foreign_key="service_job.id", index=True)
    part_id: int = Field(foreign_key="part.id", index=True)
    qty: int


class ImportBatch(SQLModel, table=True):
    __tablename__ = "import_batch"
    id: int | None = Field(default=None, primary_key=True)
    kind: str = Field(max_length=24)
    fingerprint: str = Field(max_length=64, index=True)
    filename: str = Field(max_length=255)
    rows: int = 0
    applied_at: datetime


class ForkAlias(SQLModel, table=True):
    """A free-text fork name a user confirmed as a fork family (remembered for imports)."""

    __tablename__ = "fork_alias"
    id: int | None = Field(default=None, primary_key=True)
    text: str = Field(index=True, unique=True, max_length=200)
    fork_family_id: int = Field(foreign_key="fork_family.id")


class SubstitutionNote(SQLModel, table=True):
    """Evidence that a technician fitted a part in a seat: recorded, never used as a rule."""

    __tablename__ = "substitution_note"
    id: int | None = Field(default=None, primary_key=True)
    seat_id: int = Field(foreign_key="seat.id", index=True)
    part_id: int = Field(foreign_key="part.id", index=True)
    ts: datetime
    user: str | None = Field(default=None, max_length=64)
    outcome: str = Field(default="", max_length=200)


class PurchaseOrder(SQLModel, table=True):
    __tablename__ = "purchase_order"
    id: int | None = Field(default=None, primary_key=True)
    ref: str = Field(index=True, unique=True, max_length=32)
    supplier_id: int = Field(foreign_key="supplier.id", index=True)
    created: date
    order_by: date | None = None
    expected: date | None = None
    status: str = Field(default="open", max_length=16)  # open, closed, cancelled


class PurchaseOrderLine(SQLModel, table=True):
    __tablename__ = "purchase_order_line"
    __table_args__ = (
        UniqueConstraint("order_id", "part_id", name="uq_po_line"),
        CheckConstraint("qty > 0", name="ck_po_line_qty"),
        CheckConstraint("received_qty >= 0", name="ck_po_line_received"),
    )
    id: int | None = Field(default=None, primary_key=True)
    order_id: int = Field(foreign_key="purchase_order.id", index=True)
    part_id: int = Field(foreign_key="part.id", index=True)
    qty: int
    received_qty: int = 0
    unit_cost: Decimal = Field(sa_column=Column(MONEY, nullable=False))
    reason: str = Field(default="", max_length=400)


class ImportedRow(SQLModel, table=True):
    """A fingerprint of each applied import row, so re-importing a file (or an overlapping
    one) applies only the rows not seen before."""

    __tablename__ = "imported_row"
    __table_args__ = (UniqueConstraint("kind", "row_key", name="uq_imported_row"),)
    id: int | None = Field(default=None, primary_key=True)
    kind: str = Field(max_length=24)
    row_key: str = Field(max_length=64)
    batch_id: int = Field(foreign_key="import_batch.id", index=True)


class Person(SQLModel, table=True):
    """Someone who signs in to the web app: a name, a role (technician, manager, admin), an
    Argon2 password hash, and the failed-login count behind the sign-in throttle. Movements
    record the person's name in ``Movement.user``."""

    __tablename__ = "person"
    __table_args__ = (
        CheckConstraint("role IN ('technician', 'manager', 'admin')", name="ck_person_role"),
    )
    id: int | None = Field(default=None, primary_key=True)
    name: str = Field(index=True, unique=True, max_length=64)
    role: str = Field(max_length=16)
    password_hash: str = Field(max_length=200)
    active: bool = True
    created: datetime
    failed_logins: int = 0
    locked_until: datetime | None = None


class MonthClose(SQLModel, table=True):
    """One act on a month's books: ``close`` (with a snapshot of the month's report totals,
    JSON) or ``reopen`` (with its reason). A month is closed when its latest act is a close;
    the acts are kept, so a reopening stays on record."""

    __tablename__ = "month_close"
    __table_args__ = (
        CheckConstraint("action IN ('close', 'reopen')", name="ck_month_close_action"),
    )
    id: int | None = Field(default=None, primary_key=True)
    month: str = Field(max_length=7, index=True)  # "2026-11"
    action: str = Field(max_length=8)
    ts: datetime
    user: str | None = Field(default=None, max_length=64)
    reason: str = Field(default="", max_length=200)
    totals: str = Field(default="", max_length=4000)


class RecordedPlan(SQLModel, table=True):
    """A replenishment plan recorded as purchase orders, by its identity (a hash of the plan
    date and its order lines, :func:`inventory.ordering.model.plan_identity`). The unique
    identity makes recording the same plan again, from its JSON or its workbook or from
    several processes at once, create its orders once."""

    __tablename__ = "recorded_plan"
    __table_args__ = (UniqueConstraint("identity", name="uq_recorded_plan"),)
    id: int | None = Field(default=None, primary_key=True)
    identity: str = Field(max_length=64)
    filename: str = Field(default="", max_length=255)
    recorded_at: datetime
    orders: str = Field(default="", max_length=2000)  # the order references it created
