"""History use cases for the faces (command line, web): spreadsheet imports (preview or
apply), table exports and blank templates; service jobs are in :mod:`inventory.history.jobs`
and reached through :func:`record_job` and friends below.

The importers and writers (and openpyxl behind them) are imported when a call runs, so a
face can import this module at start-up for free.
"""

from __future__ import annotations

from collections.abc import Sequence
from datetime import date
from pathlib import Path
from typing import TYPE_CHECKING, Any

from sqlmodel import Session

from inventory.sheets.kinds import KINDS, service_level

if TYPE_CHECKING:
    from inventory.history.imports import ImportReport

#: What ``export`` can write (inventory.history.exports uses this list).
TABLES = ("parts", "stock", "lots", "movements", "jobs")

__all__ = ["KINDS", "TABLES", "add_job", "export_table", "import_file", "job_detail", "list_jobs",
           "resolve_fork", "service_level", "write_template"]


def import_file(session: Session, file: str | Path, *, kind: str, apply: bool,
                **settings: Any) -> ImportReport:
    """Preview (``apply=False``) or apply an import of ``file`` as ``kind``; ``settings`` are
    the fields of :class:`inventory.history.imports.ImportSettings` (sheet, mapping,
    resolutions, review, date_order, stock, stock_before_ledger, ...)."""
    from inventory.history.imports import ImportSettings, run_import

    return run_import(session, Path(file), ImportSettings(kind=kind, **settings), apply=apply)


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
    choices, remembered, codes = fork_choices(session)
    code, _, _, cands = resolve_fork_text(text, choices, remembered, codes)
    if code:
        return code
    best = ", ".join(f"{c.code} ({c.score:.0f})" for c in cands[:3])
    raise InventoryError(f"unknown fork family {text!r}", kind="unknown",
                         hint=f"closest: {best}" if best else "list them with "
                         "`inventory catalog export`")


# -- service jobs ------------------------------------------------------------------------------


def add_job(session: Session, *, fork: str, day: date, service: str,
            items: Sequence[tuple[str, int]], ref: str | None = None, hours: int | None = None,
            fork_ref: str | None = None) -> tuple[Any, list[Any]]:
    """Record a job (fork family by code or free text, ``items`` as (part or kit code,
    quantity)) and take its parts from stock, all or nothing; returns the job row and the
    movements booked, as :func:`job_detail`."""
    from inventory.history.jobs import JobItem, job_detail, next_ref, record_job

    code = resolve_fork(session, fork)
    job_ref = ref or next_ref(session, day)
    record_job(session, ref=job_ref, day=day, fork=code, service=service,
               items=[JobItem(c, n) for c, n in items], hours=hours, fork_ref=fork_ref)
    return job_detail(session, job_ref)


def list_jobs(session: Session, **filters: Any) -> list[Any]:
    """Jobs with their lines (filters: since, until, fork, limit, newest_first)."""
    from inventory.history.jobs import list_jobs as rows

    return rows(session, **filters)


def job_detail(session: Session, ref: str) -> tuple[Any, list[Any]]:
    """One job, its lines and the stock movements booked against it."""
    from inventory.history.jobs import job_detail as detail

    return detail(session, ref)


# -- imports decided in a page ------------------------------------------------------------------


def import_deciding(session: Session, file: str | Path, *, kind: str, apply: bool,
                    forks: dict[str, str] | None = None, **settings: Any) -> ImportReport:
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
    return import_file(session, file, kind=kind, apply=apply, **settings)


def fork_codes(session: Session) -> list[str]:
    """Every fork family code, for pickers."""
    from sqlmodel import select

    from inventory.core.tables import ForkFamily

    return list(session.exec(select(ForkFamily.code).order_by(ForkFamily.code)))


def new_job_ref(session: Session, day: date) -> str:
    """A fresh job reference for ``day`` that no other writer can take at the same time."""
    from inventory.history.jobs import next_ref

    return next_ref(session, day)
