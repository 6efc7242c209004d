"""The bulk path for service jobs: :class:`JobWriter` books many jobs (an import, the
demo's three years) with the same rules as :func:`inventory.history.jobs.record_job`.

Looking up every code and every lot again for each of 100,000 rows is what makes an import
slow, so it loads the codes once (:class:`CatalogIndex`) and the stock once
(:class:`StockBook`), takes stock in memory in the ledger's order (oldest cure quarter
first, then receipt date, then lot), and writes movements, balances, jobs and lines in bulk
at the end. The database's own check still refuses a negative balance, so a mistake here
fails the transaction instead of corrupting stock.

The stock book lives in :mod:`inventory.history.stock_book`, the bulk INSERT / COPY and
look-ups in :mod:`inventory.history.bulk_write`.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from datetime import date

from sqlmodel import Session, select

from inventory.core.errors import InventoryError, Problem
from inventory.core.model import PartKind
from inventory.core.tables import ForkFamily, JobLine, Kit, KitLine, Part, ServiceJob
from inventory.history.bulk_write import analyze, bulk_insert, present
from inventory.history.jobs import JobSpec, noon
from inventory.history.stock_book import PartRef, StockBook
from inventory.stock import months

# the bulk helpers and the stock book are imported from here by the history import
__all__ = ["CatalogIndex", "JobWriter", "PartRef", "StockBook", "analyze", "bulk_insert",
           "existing_refs", "present", "record_jobs"]


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


def existing_refs(session: Session, refs: Iterable[str]) -> set[str]:
    """Which of ``refs`` are already recorded."""
    return present(session, ServiceJob.ref, refs)


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
