"""Service jobs: what a rebuild consumed, booked through the ledger in one transaction.

A job line names a part or a kit. A kit on hand is issued whole; a kit not on hand is
assembled from loose seals through its bill of materials (each component issued, oldest cure
first). Either way the job lines record what actually left the shelf.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import UTC, date, datetime, time

from sqlmodel import Session, select

from inventory.domain.model import PartKind
from inventory.errors import InventoryError
from inventory.store import ledger, lookup
from inventory.store.models import JobLine, Kit, KitLine, Part, ServiceJob


@dataclass(frozen=True, slots=True)
class JobItem:
    code: str  # part or kit code
    qty: int


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
    ts = datetime.combine(day, time(12, 0), tzinfo=UTC)
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
