"""Service jobs: what a rebuild consumed, booked through the ledger in one transaction.

A job line names a part or a kit. A kit on hand is issued whole; a kit not on hand is
assembled from loose seals through its bill of materials (each component issued, oldest cure
first). Either way the job lines record what actually left the shelf.

Two paths book jobs, with the same rules:

- :func:`record_job` books one job through :func:`inventory.stock.ledger.issue` (the counter
  and ``inventory job add``).
- :class:`~inventory.history.bulk_jobs.JobWriter` books many (an import, the demo's three
  years; :mod:`inventory.history.bulk_jobs`). Looking up every code
  and every lot again for each of 100,000 rows is what makes an import slow, so it loads the
  codes once (:class:`CatalogIndex`) and the stock once (:class:`StockBook`), takes stock in
  memory in the ledger's order (oldest cure quarter first, then receipt date, then lot), and
  writes movements, balances, jobs and lines in bulk at the end. The database's own check
  still refuses a negative balance, so a mistake here fails the transaction instead of
  corrupting stock.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import UTC, date, datetime, time

from sqlalchemy import func
from sqlalchemy import text as sql_text
from sqlmodel import Session, select

from inventory.core import lookup
from inventory.core.errors import InventoryError
from inventory.core.model import PartKind
from inventory.core.tables import (
    ForkAlias,
    ForkFamily,
    JobLine,
    Kit,
    KitLine,
    Location,
    Lot,
    Movement,
    Part,
    ServiceJob,
)
from inventory.sheets.columns import normalise
from inventory.sheets.fuzzy import Candidate, Choice, rank, words
from inventory.sheets.kinds import service_level  # noqa: F401 (part of this module's API)
from inventory.stock import allocation, ledger, months


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


def bill_of_materials(session: Session, kit_part: Part) -> list[tuple[Part, int]]:
    rows = session.exec(
        select(Part, KitLine.qty).join(KitLine, KitLine.part_id == Part.id)
        .join(Kit, Kit.id == KitLine.kit_id).where(Kit.part_id == kit_part.id).order_by(Part.code)
    )
    return list(rows)


def record_job(session: Session, spec: JobSpec, *, explode_kits: bool = False,
               batch_id: int | None = None) -> ServiceJob:
    """Book the job ``spec`` and issue its parts; raises (and so writes nothing) on any
    shortage. ``explode_kits``: kits are taken from loose seals even when one is on hand."""
    ref, day, fork, service, items = spec.ref, spec.day, spec.fork, spec.service, spec.items
    hours, fork_ref = spec.hours, spec.fork_ref
    if session.exec(select(ServiceJob.id).where(ServiceJob.ref == ref)).first() is not None:
        raise InventoryError(f"job {ref} is already recorded", kind="conflict")
    if not items:
        raise InventoryError(f"job {ref} uses no parts or kits")
    fam = lookup.fork(session, fork)
    months.refuse_if_closed(session, day)
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
            explode_kits or allocation.free_on(session, part, day) < item.qty
        ):
            bom = bill_of_materials(session, part)
            if not bom:
                raise InventoryError(f"kit {part.code} is not on hand and has no bill of materials")
            takes = [(p, q * item.qty) for p, q in bom]
        else:
            takes = [(part, item.qty)]
        for p, q in takes:
            ledger.issue(session, ledger.Issue(p.code, q, reference=ref, ts=ts, batch_id=batch_id))
            used[p.id] = used.get(p.id, 0) + q
    for part_id, q in used.items():
        session.add(JobLine(job_id=job.id, part_id=part_id, qty=q))
    session.flush()
    return job


def next_ref(session: Session, day: date) -> str:
    """A fresh job reference for ``day``: ``J20260315-3`` for the third that day.

    No other writer can take the same number: on PostgreSQL a transaction-scoped advisory
    lock serialises the numbering until the caller commits (SQLite write transactions are
    already serial: BEGIN IMMEDIATE)."""
    if session.get_bind().dialect.name == "postgresql":
        session.execute(sql_text("SELECT pg_advisory_xact_lock(hashtext('inventory.job_ref'))"))
    stem = f"J{day:%Y%m%d}-"
    n = session.exec(select(func.count()).select_from(ServiceJob)
                     .where(ServiceJob.ref.like(f"{stem}%"))).one()
    while True:
        n += 1
        ref = f"{stem}{n}"
        if session.exec(select(ServiceJob.id).where(ServiceJob.ref == ref)).first() is None:
            return ref


# --- which fork family a free text names -----------------------------------------------


def fork_key(text: str) -> str:
    """The form free fork texts are compared and remembered in: lower-case words."""
    return " ".join(words(text).split())[:200]


@dataclass(frozen=True)
class ForkChoices:
    """What a free fork text is matched against: the fork families as choices for
    :func:`rank`, remembered aliases (text -> code) and the codes by their
    letters-and-digits form."""

    choices: list[Choice]
    remembered: dict[str, str]
    codes: dict[str, str]


def fork_choices(session: Session) -> ForkChoices:
    """The fork families, their remembered aliases and codes (see :class:`ForkChoices`)."""
    aliases: dict[int, list[str]] = {}
    remembered: dict[str, str] = {}
    fams = list(session.exec(select(ForkFamily).order_by(ForkFamily.code)))
    by_id = {f.id: f.code for f in fams}
    for text, fid in session.exec(select(ForkAlias.text, ForkAlias.fork_family_id)):
        aliases.setdefault(fid, []).append(text)
        remembered[fork_key(text)] = by_id[fid]
    choices = [Choice(f.code, (f.description, *aliases.get(f.id, ())), f.description,
                      ((f.stanchion_mm, f.stanchion_mm),
                       (float(f.travel_min_mm), float(f.travel_max_mm))),
                      (f.year_from, f.year_to or 9999))
               for f in fams]
    codes = {normalise(f.code): f.code for f in fams}
    return ForkChoices(choices, remembered, codes)


def resolve_fork_text(text: str, forks: ForkChoices, *, accept_score: float = 90.0,
                      accept_margin: float = 8.0, floor: float = 0.0, limit: int = 5
                      ) -> tuple[str | None, str, float, list[Candidate]]:
    """(code or None, how, score, candidates) for one free fork text: an exact code, a
    remembered alias, or a rapidfuzz ranking accepted when the best scores at least
    ``accept_score`` and leads the next family by ``accept_margin``."""
    code = forks.codes.get(normalise(text))
    if code:
        return code, "code", 100.0, []
    code = forks.remembered.get(fork_key(text))
    if code:
        return code, "alias", 100.0, []
    cands = rank(text, forks.choices, limit=limit, floor=floor)
    if cands:
        lead = cands[0].score - (cands[1].score if len(cands) > 1 else 0.0)
        if cands[0].score >= accept_score and lead >= accept_margin:
            return cands[0].code, "fuzzy", cands[0].score, cands
    return None, "review", cands[0].score if cands else 0.0, cands


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
    # when and why the job was voided (it stays listed, but no job count includes it)
    voided_at: datetime | None = None
    void_reason: str | None = None

    @property
    def voided(self) -> bool:
        return self.voided_at is not None

    def to_dict(self) -> dict:
        return {"ref": self.ref, "date": self.day.isoformat(), "fork": self.fork,
                "service": self.service, "hours": self.hours, "fork_ref": self.fork_ref,
                "lines": [{"part": p, "qty": q} for p, q in self.lines],
                "voided": self.voided,
                "voided_at": self.voided_at.isoformat() if self.voided_at else None,
                "void_reason": self.void_reason}


def list_jobs(session: Session, *, since: date | None = None, until: date | None = None,
              fork: str | None = None, limit: int | None = None,
              newest_first: bool = True) -> list[JobRow]:
    """Jobs with their lines, filtered by date range and fork family; a voided job is
    listed too, with when and why it was voided."""
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
                   tuple(lines.get(j.id, ())), j.voided_at, j.void_reason) for j, fam in jobs]


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
        raise InventoryError(f"unknown job {ref!r}", kind="unknown",
                             hint=lookup.did_you_mean(ref, refs,
                                                      "list jobs with `inventory job list`"))
    row = next(r for r in list_jobs(session, since=job.day, until=job.day) if r.ref == ref)
    moves = [JobMovement(p, loc, lot, cured, q) for p, loc, lot, cured, q in session.exec(
        select(Part.code, Location.code, Lot.code, Lot.cured, Movement.qty)
        .join(Part, Part.id == Movement.part_id)
        .join(Location, Location.id == Movement.location_id)
        .join(Lot, Lot.id == Movement.lot_id)
        .where(Movement.reference == ref).order_by(Movement.id))]
    return row, moves
