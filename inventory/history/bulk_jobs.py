"""The bulk path for service jobs: :class:`JobWriter` books many jobs (an import, the
demo's three years) with the same rules as :func:`inventory.history.jobs.record_job`.

Looking up every code and every lot again for each of 100,000 rows is what makes an import
slow, so it loads the codes once (:class:`CatalogIndex`) and the stock once
(:class:`StockBook`), takes stock in memory in the ledger's order (oldest cure quarter
first, then receipt date, then lot), and writes movements, balances, jobs and lines in bulk
at the end. The database's own check still refuses a negative balance, so a mistake here
fails the transaction instead of corrupting stock.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from datetime import date, datetime
from decimal import Decimal
from typing import Any
from zoneinfo import ZoneInfo

from sqlalchemy import DateTime
from sqlmodel import Session, select

from inventory.core.errors import InventoryError, Problem
from inventory.core.model import PartKind
from inventory.core.tables import (
    ForkFamily,
    JobLine,
    Kit,
    KitLine,
    Lot,
    Movement,
    Part,
    ServiceJob,
    StockBalance,
)
from inventory.history.jobs import JobSpec, noon
from inventory.stock import allocation, ledger, months, shelf_life, timeline

# --- bulk writes -------------------------------------------------------------------------


def bulk_insert(session: Session, table, rows: Sequence[dict], *, ids: bool = False
                ) -> list[int]:
    """INSERT many rows through the driver's executemany, in the caller's transaction.

    SQLAlchemy's own executemany builds parameters row by row in Python, which costs more
    than the database's work on 100,000 rows. Values still go through each column's type
    (the bind processors SQLAlchemy would apply), so they are stored exactly as the ORM
    stores them. With ``ids=True`` the primary keys are reserved first (from the sequence on
    PostgreSQL; after the largest id on SQLite, whose write transaction is exclusive) and
    returned in row order.
    """
    if not rows:
        return []
    conn = session.connection()
    dialect = conn.dialect
    names = list(rows[0])
    new_ids: list[int] = []
    if ids:
        new_ids = _reserve_ids(session, table, len(rows))
        names = ["id", *names]
    quote = dialect.identifier_preparer.quote
    procs = [table.c[n].type.dialect_impl(dialect).bind_processor(dialect) for n in names]
    columns: list[Any] = [new_ids] if ids else []
    columns += [[row[n] for row in rows] for n in names[1 if ids else 0:]]
    if dialect.name == "postgresql":
        procs = [_pg_timestamp(conn) if isinstance(table.c[n].type, DateTime)
                 and not table.c[n].type.timezone else p
                 for n, p in zip(names, procs, strict=True)]
    for j, proc in enumerate(procs):
        if proc is None:
            continue
        done: dict[Any, Any] = {}  # values repeat (a day, a cost): convert each once
        columns[j] = [None if v is None else done[v] if v in done else
                      done.setdefault(v, proc(v)) for v in columns[j]]
    cols = ", ".join(quote(n) for n in names)
    if dialect.name == "postgresql":
        # COPY: the fastest way in; the same checks (constraints, keys) apply as to INSERT
        raw = conn.connection.driver_connection
        with raw.cursor() as cur, cur.copy(f"COPY {quote(table.name)} ({cols}) FROM STDIN") as cp:
            for row in zip(*columns, strict=True):
                cp.write_row(row)
        return new_ids
    mark = "?" if dialect.paramstyle == "qmark" else "%s"
    sql = f"INSERT INTO {quote(table.name)} ({cols}) VALUES ({', '.join([mark] * len(names))})"
    conn.exec_driver_sql(sql, list(zip(*columns, strict=True)))
    return new_ids


def _pg_timestamp(conn):
    """What PostgreSQL stores for an aware date-time in a ``timestamp`` (without time zone)
    column on INSERT: the wall time in the session's time zone. COPY would drop the offset
    instead, so convert. (``timestamptz`` columns take the aware value as it is.)"""
    zone = ZoneInfo(conn.exec_driver_sql("SHOW TimeZone").scalar())

    def convert(v: datetime) -> datetime:
        return v.astimezone(zone).replace(tzinfo=None) if v.tzinfo is not None else v
    return convert


def _reserve_ids(session: Session, table, n: int) -> list[int]:
    conn = session.connection()
    if conn.dialect.name == "postgresql":
        return [r[0] for r in conn.exec_driver_sql(
            f"SELECT nextval(pg_get_serial_sequence('{table.name}', 'id')) "
            f"FROM generate_series(1, {int(n)})")]
    top = conn.exec_driver_sql(f"SELECT coalesce(max(id), 0) FROM {table.name}").scalar()
    return list(range(top + 1, top + 1 + n))


@dataclass(frozen=True, slots=True)
class PartRef:
    id: int
    code: str
    kind: str
    material: str | None = None


class CatalogIndex:
    """Part, kit and fork family codes to ids, read once."""

    def __init__(self, session: Session) -> None:
        self.parts: dict[str, PartRef] = {}
        for pid, code, kind, material in session.exec(
                select(Part.id, Part.code, Part.kind, Part.material)):
            self.parts[code] = PartRef(pid, code, str(kind), material)
        self.parts_upper = {c.upper(): p for c, p in self.parts.items()}
        self.by_id = {p.id: p for p in self.parts.values()}
        self.bom: dict[int, list[tuple[int, int]]] = {}
        for kit_part, part_id, qty in session.exec(
                select(Kit.part_id, KitLine.part_id, KitLine.qty)
                .join(KitLine, KitLine.kit_id == Kit.id)):
            self.bom.setdefault(kit_part, []).append((part_id, qty))
        for lines in self.bom.values():
            lines.sort(key=lambda x: self.by_id[x[0]].code)
        self.forks: dict[str, int] = {c: i for i, c in session.exec(
            select(ForkFamily.id, ForkFamily.code))}
        self.forks_upper = {c.upper(): i for c, i in self.forks.items()}

    def part(self, code: str) -> PartRef | None:
        return self.parts.get(code) or self.parts_upper.get(code.upper())

    def fork(self, code: str) -> int | None:
        return self.forks.get(code) or self.forks_upper.get(code.upper())


@dataclass(slots=True)
class _Slot:
    balance_id: int
    location_id: int
    lot_id: int
    unit_cost: Decimal
    qty: int
    cured: str | None = None  # the lot's, for its ISO 2230 storage limit
    extended_until: date | None = None


@dataclass
class StockBook:
    """Every balance of stock, loaded once, allocated in memory in the ledger's order.

    With ``write=False`` it only simulates (a preview); with ``write=True`` the movements and
    balance changes it books are written by :meth:`flush` (called by the writer at the end,
    and before any other ledger call so that call sees them).
    """

    session: Session
    write: bool = True
    user: str | None = None
    slots: dict[int, list[_Slot]] = field(default_factory=dict)
    pending: list[dict] = field(default_factory=list)
    deltas: dict[int, int] = field(default_factory=dict)
    booked: int = 0  # movements booked (written or, when simulating, that would be)
    # per part: (the day it was read from, the part's movements booked after that day)
    later: dict[int, tuple[date, list]] = field(default_factory=dict)

    def __post_init__(self) -> None:
        self.user = self.user or ledger.current_user()
        self._load(None)

    def _query(self, part_id: int | None):
        q = (select(StockBalance.part_id, StockBalance.id, StockBalance.location_id,
                    StockBalance.lot_id, StockBalance.qty, Lot.unit_cost, Lot.cured,
                    Lot.extended_until)
             .join(Lot, Lot.id == StockBalance.lot_id)
             .where(StockBalance.qty > 0))
        if part_id is not None:
            q = q.where(StockBalance.part_id == part_id)
        q = q.order_by(StockBalance.part_id, *ledger.fifo_order(), StockBalance.id)
        if self.session.get_bind().dialect.name == "postgresql":
            # Lock in the ledger's one global order (part, lot, location) first, so a bulk
            # booking beside a counter's never holds rows the other waits for in reverse;
            # then read the current values in FIFO order.
            key = select(StockBalance.id)
            if part_id is not None:
                key = key.where(StockBalance.part_id == part_id)
            self.session.execute(key.order_by(StockBalance.part_id, StockBalance.lot_id,
                                              StockBalance.location_id).with_for_update())
        return self.session.exec(q)

    def _load(self, part_id: int | None) -> None:
        if part_id is None:
            self.slots = {}
        else:
            self.slots[part_id] = []
        for pid, bid, loc, lot, qty, cost, cured, ext in self._query(part_id):
            self.slots.setdefault(pid, []).append(_Slot(bid, loc, lot, cost, qty, cured, ext))

    def reload(self, part_id: int) -> None:
        """Read one part's balances again (after a ledger call changed them)."""
        self.flush()
        self._load(part_id)
        self.later.pop(part_id, None)

    def on_hand(self, part_id: int) -> int:
        return sum(s.qty for s in self.slots.get(part_id, ()))

    def _later(self, part_id: int, day: date) -> list:
        got = self.later.get(part_id)
        if got is None or got[0] > day:
            got = (day, timeline.later_movements(self.session, part_id, day))
            self.later[part_id] = got
        return [m for m in got[1] if timeline.day_of(m[0]) > day]

    def free(self, part_id: int, day: date) -> list[tuple[_Slot, int]]:
        """Each slot of the part with what a booking dated ``day`` may take from it (the
        ledger's time-order rule: no later day's balance may go below zero)."""
        slots = self.slots.get(part_id, [])
        later = self._later(part_id, day)
        if not later:
            return [(s, s.qty) for s in slots]
        win = timeline.window({(s.location_id, s.lot_id): s.qty for s in slots}, later, day)
        return [(s, win[(s.location_id, s.lot_id)].free) for s in slots]

    def free_total(self, part_id: int, day: date) -> int:
        return sum(n for _, n in self.free(part_id, day))

    def take(self, part: PartRef, qty: int, *, reference: str | None, ts: datetime,
             batch_id: int | None = None, kind: str = "issue") -> None:
        """Take ``qty`` of ``part``, oldest cure first; all or nothing."""
        slots = self.slots.get(part.id, [])
        if qty <= 0:
            raise InventoryError(f"quantity of {part.code} must be more than 0, got {qty}")
        day = timeline.day_of(ts)
        cands = self.free(part.id, day)
        if kind == "issue":  # as the ledger: lots past their ISO 2230 storage limit are skipped
            cands = [(s, 0 if shelf_life.state(s, part.material, day).past else n)
                     for s, n in cands]
        got = allocation.fifo_take(cands, qty)  # the ledger's one allocation rule
        if got is None:
            have = sum(s.qty for s in slots)
            free = sum(n for _, n in cands)
            if free < sum(n for _, n in self.free(part.id, day)):
                raise InventoryError(
                    f"not enough stock of {part.code} on {day.isoformat()}: asked {qty}, "
                    f"usable {free}; the rest is past its ISO 2230 storage limit",
                    kind="shortage", hint="inspect the lots and book the job with --inspected "
                    "at the counter, or receive fresh stock")
            if free == have:
                raise InventoryError(
                    f"not enough stock of {part.code}: asked {qty}, on hand {have}",
                    kind="shortage", hint=allocation.SHORT_HINT)
            raise InventoryError(
                f"not enough stock of {part.code} on {day.isoformat()}: asked {qty}, free "
                f"then {free} (later bookings take the rest of {have})", kind="shortage",
                hint="book it on a later date")
        for slot, n in got:
            slot.qty -= n
            self.booked += 1
            if self.write:
                self.pending.append(dict(
                    ts=ts, part_id=part.id, location_id=slot.location_id, lot_id=slot.lot_id,
                    qty=-n, kind=kind, unit_cost=slot.unit_cost, reference=reference,
                    reason=None, user=self.user, batch_id=batch_id))
                self.deltas[slot.balance_id] = self.deltas.get(slot.balance_id, 0) - n
        self.slots[part.id] = [s for s in slots if s.qty > 0]

    def flush(self) -> None:
        """Write the movements and balance changes booked so far."""
        if not self.write or not self.pending:
            return
        bulk_insert(self.session, Movement.__table__, self.pending)
        conn = self.session.connection()
        mark = "?" if conn.dialect.paramstyle == "qmark" else "%s"
        changes = [(d, b) for b, d in self.deltas.items() if d]
        if changes:  # the database's check refuses a balance below zero
            conn.exec_driver_sql(
                f"UPDATE stock_balance SET qty = qty + {mark} WHERE id = {mark}", changes)
        self.pending = []
        self.deltas = {}


@dataclass
class JobWriter:
    """Books many jobs: stock is taken as each is added (so receipts and counts can be
    interleaved in date order), rows are written in bulk by :meth:`finish`.

    ``stock=False`` records jobs and their lines as given (kits not exploded) without taking
    stock: for history from before the ledger started.
    """

    session: Session
    index: CatalogIndex
    book: StockBook | None
    batch_id: int | None = None
    explode_kits: bool = False
    jobs: list[dict] = field(default_factory=list)
    lines: list[list[tuple[int, int]]] = field(default_factory=list)

    def add(self, job: JobSpec) -> None:
        fork_id = self.index.fork(job.fork)
        if fork_id is None:
            raise InventoryError(f"job {job.ref}: unknown fork family {job.fork!r}",
                                 kind="unknown")
        if not job.items:
            raise InventoryError(f"job {job.ref} uses no parts or kits")
        months.refuse_if_closed(self.session, job.day)
        ts = noon(job.day)
        used: dict[int, int] = {}
        for item in job.items:
            part = self.index.part(item.code)
            if part is None:
                raise InventoryError(f"job {job.ref}: unknown part {item.code!r}",
                                     kind="unknown")
            if item.qty <= 0:
                raise InventoryError(f"job {job.ref}: quantity of {part.code} must be above 0")
            for p, q in self.consumption(part, item.qty, job.day):
                if self.book is not None:
                    try:
                        self.book.take(p, q, reference=job.ref, ts=ts, batch_id=self.batch_id)
                    except InventoryError as exc:
                        raise InventoryError(
                            [Problem(f"job {job.ref}: {exc.problems[0].message}",
                                     kind="shortage")], hint=exc.hint) from None
                used[p.id] = used.get(p.id, 0) + q
        self.jobs.append(dict(ref=job.ref, day=job.day, fork_family_id=fork_id,
                              service_level=str(job.service), ride_hours=job.hours,
                              fork_ref=job.fork_ref, batch_id=self.batch_id))
        self.lines.append(list(used.items()))

    def consumption(self, part: PartRef, qty: int, day: date) -> list[tuple[PartRef, int]]:
        """What leaves the shelf for ``qty`` of ``part``: the part itself, or for a kit not
        on hand (or when kits are always exploded) its bill of materials."""
        if self.book is None or part.kind != PartKind.KIT:
            return [(part, qty)]
        if not self.explode_kits and self.book.free_total(part.id, day) >= qty:
            return [(part, qty)]
        bom = self.index.bom.get(part.id)
        if not bom:
            raise InventoryError(f"kit {part.code} is not on hand and has no bill of materials",
                                 kind="shortage")
        return [(self.index.by_id[pid], q * qty) for pid, q in bom]

    def finish(self) -> int:
        """Write the jobs, their lines and the stock movements; return the number of jobs."""
        if self.book is not None:
            self.book.flush()
        if not self.jobs:
            return 0
        n = len(self.jobs)
        ids = bulk_insert(self.session, ServiceJob.__table__, self.jobs, ids=True)
        rows = [dict(job_id=jid, part_id=pid, qty=q)
                for jid, lines in zip(ids, self.lines, strict=True) for pid, q in lines]
        bulk_insert(self.session, JobLine.__table__, rows)
        self.jobs, self.lines = [], []
        if n > 1000:
            analyze(self.session, "service_job", "job_line", "movement", "stock_balance")
        return n


def present(session: Session, column, values: Iterable[Any], *where: Any,
            all_above: int = 2000) -> set:
    """Which of ``values`` the column holds (rows also matching ``where``). Few values are
    asked in chunks of 500; more than ``all_above`` read the column once and compare here,
    which stays linear whatever plan the database picks for long IN lists."""
    wanted = list(dict.fromkeys(values))
    if not wanted:
        return set()
    if len(wanted) > all_above:
        return set(session.exec(select(column).where(*where))) & set(wanted)
    found: set = set()
    for i in range(0, len(wanted), 500):
        found.update(session.exec(select(column).where(*where, column.in_(wanted[i:i + 500]))))
    return found


def existing_refs(session: Session, refs: Iterable[str]) -> set[str]:
    """Which of ``refs`` are already recorded."""
    return present(session, ServiceJob.ref, refs)


def analyze(session: Session, *tables: str) -> None:
    """Refresh PostgreSQL's planner statistics after a bulk write, so the next queries on
    these tables (a re-run of the same import) are planned for their real size."""
    if session.get_bind().dialect.name == "postgresql" and tables:
        session.connection().exec_driver_sql(f"ANALYZE {', '.join(tables)}")


def record_jobs(session: Session, jobs: Sequence[JobSpec], *, batch_id: int | None = None,
                stock: bool = True, explode_kits: bool = False) -> int:
    """Book many jobs in date order in the caller's transaction; all or nothing."""
    taken = existing_refs(session, (j.ref for j in jobs))
    if taken:
        raise InventoryError(
            [Problem(f"job {r} is already recorded", kind="conflict") for r in sorted(taken)])
    index = CatalogIndex(session)
    book = StockBook(session, write=True) if stock else None
    writer = JobWriter(session, index, book, batch_id=batch_id, explode_kits=explode_kits)
    for job in sorted(jobs, key=lambda j: j.day):
        writer.add(job)
    return writer.finish()


