"""Service jobs: what a rebuild consumed, booked through the ledger in one transaction.

A job line names a part or a kit. A kit on hand is issued whole; a kit not on hand is
assembled from loose seals through its bill of materials (each component issued, oldest cure
first). Either way the job lines record what actually left the shelf.

Two paths book jobs, with the same rules:

- :func:`record_job` books one job through :func:`inventory.store.ledger.issue` (the counter
  and ``inventory job add``).
- :class:`JobWriter` books many (an import, the demo's three years). Looking up every code
  and every lot again for each of 100,000 rows is what makes an import slow, so it loads the
  codes once (:class:`CatalogIndex`) and the stock once (:class:`StockBook`), takes stock in
  memory in the ledger's order (oldest cure quarter first, then receipt date, then lot), and
  writes movements, balances, jobs and lines in bulk at the end. The database's own check
  still refuses a negative balance, so a mistake here fails the transaction instead of
  corrupting stock.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from datetime import UTC, date, datetime, time
from decimal import Decimal

from sqlalchemy import bindparam, func, insert, update
from sqlmodel import Session, select

from inventory.domain.model import PartKind, ServiceLevel
from inventory.errors import InventoryError, Problem
from inventory.store import ledger, lookup
from inventory.store.models import (
    ForkFamily,
    JobLine,
    Kit,
    KitLine,
    Location,
    Lot,
    Movement,
    Part,
    ServiceJob,
    StockBalance,
)


@dataclass(frozen=True, slots=True)
class JobItem:
    code: str  # part or kit code
    qty: int


@dataclass(frozen=True, slots=True)
class JobSpec:
    """One job to book: the fork family code, the service level and what it used."""

    ref: str
    day: date
    fork: str
    service: str
    items: tuple[JobItem, ...]
    hours: int | None = None
    fork_ref: str | None = None


def noon(day: date) -> datetime:
    """Midday UTC of ``day``: the time a job's movements are booked at, so each lands in its
    own day and month whatever the time zone."""
    return datetime.combine(day, time(12, 0), tzinfo=UTC)


def service_level(text: str) -> str:
    """A service level code from what people type: ``lower leg``, ``air can``, ``damper``."""
    s = " ".join(str(text or "").lower().replace("_", " ").replace("-", " ").split())
    for level, words in SERVICE_WORDS.items():
        if s in words:
            return level
    for level, stems in SERVICE_STEMS.items():
        if any(stem in s for stem in stems):
            return level
    raise ValueError(f"expected a service level ({', '.join(ServiceLevel)}), got {text!r}")


SERVICE_WORDS: dict[str, set[str]] = {
    ServiceLevel.LOWER_LEG: {"lower leg", "lower legs", "lowers", "lower", "ll", "lls",
                             "lower leg service", "50h", "50 h", "50 hour", "50 hours", "basic"},
    ServiceLevel.AIR_SPRING: {"air spring", "air", "air can", "air shaft", "as", "air service",
                              "air spring service", "spring"},
    ServiceLevel.DAMPER: {"damper", "damper service", "cartridge", "dmp", "full", "full service",
                          "200h", "200 h", "200 hour", "200 hours"},
}
SERVICE_STEMS: dict[str, tuple[str, ...]] = {
    ServiceLevel.LOWER_LEG: ("lower",),
    ServiceLevel.AIR_SPRING: ("air",),
    ServiceLevel.DAMPER: ("damp", "cartridge"),
}


def bill_of_materials(session: Session, kit_part: Part) -> list[tuple[Part, int]]:
    rows = session.exec(
        select(Part, KitLine.qty).join(KitLine, KitLine.part_id == Part.id)
        .join(Kit, Kit.id == KitLine.kit_id).where(Kit.part_id == kit_part.id).order_by(Part.code)
    )
    return list(rows)


def record_job(session: Session, *, ref: str, day: date, fork: str, service: str,
               items: list[JobItem], hours: int | None = None, fork_ref: str | None = None,
               explode_kits: bool = False, batch_id: int | None = None) -> ServiceJob:
    """Book a job and issue its parts; raises (and so writes nothing) on any shortage."""
    if session.exec(select(ServiceJob.id).where(ServiceJob.ref == ref)).first() is not None:
        raise InventoryError(f"job {ref} is already recorded", kind="conflict")
    if not items:
        raise InventoryError(f"job {ref} uses no parts or kits")
    fam = lookup.fork(session, fork)
    job = ServiceJob(ref=ref, day=day, fork_family_id=fam.id, service_level=service,
                     ride_hours=hours, fork_ref=fork_ref, batch_id=batch_id)
    session.add(job)
    session.flush()
    ts = noon(day)
    used: dict[int, int] = {}
    for item in items:
        part = lookup.part(session, item.code)
        if item.qty <= 0:
            raise InventoryError(f"job {ref}: quantity of {part.code} must be above 0")
        takes: list[tuple[Part, int]]
        if part.kind == PartKind.KIT and (
            explode_kits or ledger.on_hand_at(session, part) < item.qty
        ):
            bom = bill_of_materials(session, part)
            if not bom:
                raise InventoryError(f"kit {part.code} is not on hand and has no bill of materials")
            takes = [(p, q * item.qty) for p, q in bom]
        else:
            takes = [(part, item.qty)]
        for p, q in takes:
            ledger.issue(session, p.code, q, reference=ref, ts=ts, batch_id=batch_id)
            used[p.id] = used.get(p.id, 0) + q
    for part_id, q in used.items():
        session.add(JobLine(job_id=job.id, part_id=part_id, qty=q))
    session.flush()
    return job


def next_ref(session: Session, day: date) -> str:
    """A fresh job reference for ``day``: ``J20260315-3`` for the third that day."""
    stem = f"J{day:%Y%m%d}-"
    n = session.exec(select(func.count()).select_from(ServiceJob)
                     .where(ServiceJob.ref.like(f"{stem}%"))).one()
    while True:
        n += 1
        ref = f"{stem}{n}"
        if session.exec(select(ServiceJob.id).where(ServiceJob.ref == ref)).first() is None:
            return ref


# --- the bulk path -------------------------------------------------------------------------


@dataclass(frozen=True, slots=True)
class PartRef:
    id: int
    code: str
    kind: str


class CatalogIndex:
    """Part, kit and fork family codes to ids, read once."""

    def __init__(self, session: Session) -> None:
        self.parts: dict[str, PartRef] = {}
        for pid, code, kind in session.exec(select(Part.id, Part.code, Part.kind)):
            self.parts[code] = PartRef(pid, code, str(kind))
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

    def __post_init__(self) -> None:
        self.user = self.user or ledger.current_user()
        self._load(None)

    def _query(self, part_id: int | None):
        q = (select(StockBalance.part_id, StockBalance.id, StockBalance.location_id,
                    StockBalance.lot_id, StockBalance.qty, Lot.unit_cost)
             .join(Lot, Lot.id == StockBalance.lot_id)
             .where(StockBalance.qty > 0))
        if part_id is not None:
            q = q.where(StockBalance.part_id == part_id)
        q = q.order_by(StockBalance.part_id, *ledger.fifo_order(), StockBalance.id)
        if self.session.get_bind().dialect.name == "postgresql":
            q = q.with_for_update(of=StockBalance)
        return self.session.exec(q)

    def _load(self, part_id: int | None) -> None:
        if part_id is None:
            self.slots = {}
        else:
            self.slots[part_id] = []
        for pid, bid, loc, lot, qty, cost in self._query(part_id):
            self.slots.setdefault(pid, []).append(_Slot(bid, loc, lot, cost, qty))

    def reload(self, part_id: int) -> None:
        """Read one part's balances again (after a ledger call changed them)."""
        self.flush()
        self._load(part_id)

    def on_hand(self, part_id: int) -> int:
        return sum(s.qty for s in self.slots.get(part_id, ()))

    def take(self, part: PartRef, qty: int, *, reference: str | None, ts: datetime,
             batch_id: int | None = None, kind: str = "issue") -> None:
        """Take ``qty`` of ``part``, oldest cure first; all or nothing."""
        slots = self.slots.get(part.id, [])
        have = sum(s.qty for s in slots)
        if qty <= 0:
            raise InventoryError(f"quantity of {part.code} must be more than 0, got {qty}")
        if have < qty:
            raise InventoryError(
                f"not enough stock of {part.code}: asked {qty}, on hand {have}", kind="shortage",
                hint="receive stock first, or record a count if the shelf holds more than the "
                     "ledger")
        left = qty
        for slot in slots:
            if left == 0:
                break
            n = min(left, slot.qty)
            if n == 0:
                continue
            slot.qty -= n
            left -= n
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
        self.session.execute(insert(Movement.__table__), self.pending)
        bal = StockBalance.__table__
        self.session.execute(
            update(bal).where(bal.c.id == bindparam("bid"))
            .values(qty=bal.c.qty + bindparam("delta")),
            [{"bid": b, "delta": d} for b, d in self.deltas.items() if d],
        )
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
        ts = noon(job.day)
        used: dict[int, int] = {}
        for item in job.items:
            part = self.index.part(item.code)
            if part is None:
                raise InventoryError(f"job {job.ref}: unknown part {item.code!r}",
                                     kind="unknown")
            if item.qty <= 0:
                raise InventoryError(f"job {job.ref}: quantity of {part.code} must be above 0")
            for p, q in self.consumption(part, item.qty):
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

    def consumption(self, part: PartRef, qty: int) -> list[tuple[PartRef, int]]:
        """What leaves the shelf for ``qty`` of ``part``: the part itself, or for a kit not
        on hand (or when kits are always exploded) its bill of materials."""
        if self.book is None or part.kind != PartKind.KIT:
            return [(part, qty)]
        if not self.explode_kits and self.book.on_hand(part.id) >= qty:
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
        ids = list(self.session.execute(
            insert(ServiceJob).returning(ServiceJob.id, sort_by_parameter_order=True),
            self.jobs).scalars())
        rows = [dict(job_id=jid, part_id=pid, qty=q)
                for jid, lines in zip(ids, self.lines, strict=True) for pid, q in lines]
        if rows:
            self.session.execute(insert(JobLine.__table__), rows)
        self.jobs, self.lines = [], []
        return n


def existing_refs(session: Session, refs: Iterable[str]) -> set[str]:
    """Which of ``refs`` are already recorded (asked in chunks, not one by one)."""
    refs = list(dict.fromkeys(refs))
    found: set[str] = set()
    for i in range(0, len(refs), 500):
        chunk = refs[i:i + 500]
        found.update(session.exec(select(ServiceJob.ref).where(ServiceJob.ref.in_(chunk))))
    return found


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


# --- reading jobs back ---------------------------------------------------------------------


@dataclass(frozen=True, slots=True)
class JobRow:
    ref: str
    day: date
    fork: str
    service: str
    hours: int | None
    fork_ref: str | None
    lines: tuple[tuple[str, int], ...]  # (part code, qty)

    def to_dict(self) -> dict:
        return {"ref": self.ref, "date": self.day.isoformat(), "fork": self.fork,
                "service": self.service, "hours": self.hours, "fork_ref": self.fork_ref,
                "lines": [{"part": p, "qty": q} for p, q in self.lines]}


def list_jobs(session: Session, *, since: date | None = None, until: date | None = None,
              fork: str | None = None, limit: int | None = None,
              newest_first: bool = True) -> list[JobRow]:
    """Jobs with their lines, filtered by date range and fork family."""
    q = (select(ServiceJob, ForkFamily.code)
         .join(ForkFamily, ForkFamily.id == ServiceJob.fork_family_id))
    if since:
        q = q.where(ServiceJob.day >= since)
    if until:
        q = q.where(ServiceJob.day <= until)
    if fork:
        q = q.where(ServiceJob.fork_family_id == lookup.fork(session, fork).id)
    order = (ServiceJob.day.desc(), ServiceJob.id.desc()) if newest_first else (
        ServiceJob.day, ServiceJob.id)
    q = q.order_by(*order)
    if limit:
        q = q.limit(limit)
    jobs = list(session.exec(q))
    ids = [j.id for j, _ in jobs]
    lines: dict[int, list[tuple[str, int]]] = {}
    for i in range(0, len(ids), 500):
        for job_id, code, qty in session.exec(
                select(JobLine.job_id, Part.code, JobLine.qty)
                .join(Part, Part.id == JobLine.part_id)
                .where(JobLine.job_id.in_(ids[i:i + 500])).order_by(Part.code)):
            lines.setdefault(job_id, []).append((code, qty))
    return [JobRow(j.ref, j.day, fam, j.service_level, j.ride_hours, j.fork_ref,
                   tuple(lines.get(j.id, ()))) for j, fam in jobs]


@dataclass(frozen=True, slots=True)
class JobMovement:
    part: str
    location: str
    lot: str
    cured: str | None
    qty: int

    def to_dict(self) -> dict:
        return {"part": self.part, "location": self.location, "lot": self.lot,
                "cured": self.cured, "qty": self.qty}


def job_detail(session: Session, ref: str) -> tuple[JobRow, list[JobMovement]]:
    """One job, its lines and the stock movements booked against it."""
    job = session.exec(select(ServiceJob).where(ServiceJob.ref == ref)).first()
    if job is None:
        refs = list(session.exec(select(ServiceJob.ref).order_by(ServiceJob.day.desc())
                                 .limit(5000)))
        close = lookup.suggest(ref, refs)
        raise InventoryError(f"unknown job {ref!r}", kind="unknown",
                             hint=f"did you mean {', '.join(close)}?" if close else
                             "list jobs with `inventory job list`")
    row = next(r for r in list_jobs(session, since=job.day, until=job.day) if r.ref == ref)
    moves = [JobMovement(p, loc, lot, cured, q) for p, loc, lot, cured, q in session.exec(
        select(Part.code, Location.code, Lot.code, Lot.cured, Movement.qty)
        .join(Part, Part.id == Movement.part_id)
        .join(Location, Location.id == Movement.location_id)
        .join(Lot, Lot.id == Movement.lot_id)
        .where(Movement.reference == ref).order_by(Movement.id))]
    return row, moves
