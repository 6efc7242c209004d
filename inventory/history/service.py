"""History use cases for the faces (command line, web): spreadsheet imports (preview or
apply), table exports and blank templates; service jobs are in :mod:`inventory.history.jobs`
and reached through :func:`record_job` and friends below.

The importers and writers (and openpyxl behind them) are imported when a call runs, so a
face can import this module at start-up for free.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date
from pathlib import Path
from typing import TYPE_CHECKING, Any

from sqlmodel import Session

from inventory.sheets.kinds import KINDS, service_level

if TYPE_CHECKING:
    from inventory.history.imports import ImportReport as ImportReport
    from inventory.history.imports import ImportSettings as ImportSettings


def __getattr__(name: str) -> Any:
    """:class:`ImportSettings` on first use (the import engine loads when an import runs)."""
    if name == "ImportSettings":
        from inventory.history.imports import ImportSettings

        return ImportSettings
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")

#: What ``export`` can write (inventory.history.exports uses this list).
TABLES = ("parts", "stock", "lots", "movements", "jobs")

__all__ = ["KINDS", "TABLES", "JobEntry", "add_job", "add_to_job", "export_table", "import_file",
           "job_detail", "list_jobs", "resolve_fork", "service_level", "write_template"]


def import_file(session: Session, file: str | Path, settings: ImportSettings, *,
                apply: bool) -> ImportReport:
    """Preview (``apply=False``) or apply an import of ``file`` as told by ``settings`` (the
    kind, sheet, mapping, resolutions, review, date order, stock, ...)."""
    from inventory.history.imports import run_import

    return run_import(session, Path(file), settings, apply=apply)


def export_table(session: Session, table: str, target: str | Path, *,
                 fmt: str = "csv") -> tuple[Path, int]:
    """Write one table (see :data:`TABLES`) to csv or xlsx; returns the path and row count."""
    from inventory.history.exports import export_table as export

    return export(session, table, target, fmt=fmt)


def write_template(session: Session, kind: str, target: str | Path) -> Path:
    """A blank import workbook for ``kind`` with headers, examples and drop-down lists."""
    from inventory.history.exports import write_template as write

    return write(session, kind, target)


def resolve_fork(session: Session, text: str) -> str:
    """A fork family code from its code or from a free text the history import would accept
    on its own; otherwise one line naming the closest families."""
    from inventory.core import lookup
    from inventory.core.errors import InventoryError
    from inventory.history.jobs import fork_choices, resolve_fork_text

    try:
        return lookup.fork(session, text).code
    except InventoryError:
        pass
    code, _, _, cands = resolve_fork_text(text, fork_choices(session))
    if code:
        return code
    best = ", ".join(f"{c.code} ({c.score:.0f})" for c in cands[:3])
    raise InventoryError(f"unknown fork family {text!r}", kind="unknown",
                         hint=f"closest: {best}" if best else "list them with "
                         "`inventory catalog export`")


# -- service jobs ------------------------------------------------------------------------------


@dataclass(frozen=True)
class JobEntry:
    """A job as a person enters it: the fork family by code or free text, the day, the
    service level and ``items`` as (part or kit code, quantity); optionally its reference
    (a fresh one for the day otherwise), the ride hours and the customer's fork reference."""

    fork: str
    day: date
    service: str
    items: tuple[tuple[str, int], ...]
    ref: str | None = None
    hours: int | None = None
    fork_ref: str | None = None


def add_job(session: Session, entry: JobEntry) -> tuple[Any, list[Any]]:
    """Record a job and take its parts from stock, all or nothing; returns the job row and
    the movements booked, as :func:`job_detail`."""
    from inventory.history.jobs import JobItem, JobSpec, job_detail, next_ref, record_job

    code = resolve_fork(session, entry.fork)
    job_ref = entry.ref or next_ref(session, entry.day)
    record_job(session, JobSpec(job_ref, entry.day, code, entry.service,
                                tuple(JobItem(c, n) for c, n in entry.items),
                                hours=entry.hours, fork_ref=entry.fork_ref))
    return job_detail(session, job_ref)


def add_to_job(session: Session, ref: str, part: str, qty: int) -> int:
    """Take ``qty`` more of a part for an existing job: an issue booked now through the
    stock service with the job's reference, and the part added to the job's lines; refused
    when the job's month is in the closed books or the job was voided. Returns the units
    taken."""
    from sqlmodel import select

    from inventory.core import lookup
    from inventory.core.errors import InventoryError
    from inventory.core.tables import JobLine, ServiceJob
    from inventory.stock import months
    from inventory.stock import service as stock

    job = session.exec(select(ServiceJob).where(ServiceJob.ref == ref)).first()
    if job is None:
        job_detail(session, ref)  # raises "unknown job" with its did-you-mean hint
        raise InventoryError(f"unknown job {ref!r}", kind="unknown")
    if months.is_closed(session, months.label(job.day)):
        raise InventoryError(f"job {ref} ({job.day.isoformat()}) is in closed books: "
                             "record the part on a new job", kind="conflict")
    if job.voided_at is not None:  # a voided job is no job: its parts would count as nobody's
        raise InventoryError(f"job {ref} was voided ({job.voided_at:%Y-%m-%d}): record the "
                             "part on a new job", kind="conflict")
    code = lookup.part(session, part).code
    taken = stock.issue(session, code, qty, reference=ref)
    part_id = lookup.part(session, code).id
    assert job.id is not None and part_id is not None  # both read from the database
    line = session.exec(select(JobLine).where(JobLine.job_id == job.id,
                                              JobLine.part_id == part_id)).first()
    if line is None:
        line = JobLine(job_id=job.id, part_id=part_id, qty=0)
    line.qty += taken
    session.add(line)
    session.flush()
    return taken


def list_jobs(session: Session, *, since: date | None = None, until: date | None = None,
              fork: str | None = None, limit: int | None = None,
              newest_first: bool = True) -> list[Any]:
    """Jobs with their lines, by date range and fork family (a voided job listed too)."""
    from inventory.history.jobs import list_jobs as rows

    return rows(session, since=since, until=until, fork=fork, limit=limit,
                newest_first=newest_first)


def job_detail(session: Session, ref: str) -> tuple[Any, list[Any]]:
    """One job, its lines and the stock movements booked against it."""
    from inventory.history.jobs import job_detail as detail

    return detail(session, ref)


# -- imports decided in a page ------------------------------------------------------------------


def import_deciding(session: Session, file: str | Path, settings: ImportSettings, *,
                    apply: bool, forks: dict[str, str] | None = None) -> ImportReport:
    """:func:`import_file` after remembering ``forks`` (free fork text -> fork family code,
    decided by a person) as aliases, in the caller's transaction: a preview's caller rolls
    it back, an apply keeps them with the import (or loses both when it fails)."""
    from sqlmodel import select

    from inventory.core import lookup
    from inventory.core.tables import ForkAlias
    from inventory.history.jobs import fork_key

    for text, code in (forks or {}).items():
        if not code:
            continue
        fam = lookup.fork(session, code)
        assert fam.id is not None  # read from the database, so it has its id
        key = fork_key(text)
        row = session.exec(select(ForkAlias).where(ForkAlias.text == key)).first()
        if row is None:
            row = ForkAlias(text=key, fork_family_id=fam.id)
        row.fork_family_id = fam.id
        session.add(row)
    session.flush()
    return import_file(session, file, settings, apply=apply)


def answer_review_with_best(review: str | Path) -> None:
    """Fill a review workbook's answers with each row's best candidate, as a person who
    accepts every suggestion would (the demo tour's stand-in for that person)."""
    from inventory.sheets.review import answer_review

    answer_review(Path(review))


def fork_codes(session: Session) -> list[str]:
    """Every fork family code, for pickers."""
    from sqlmodel import select

    from inventory.core.tables import ForkFamily

    return list(session.exec(select(ForkFamily.code).order_by(ForkFamily.code)))


def new_job_ref(session: Session, day: date) -> str:
    """A fresh job reference for ``day`` that no other writer can take at the same time."""
    from inventory.history.jobs import next_ref

    return next_ref(session, day)
