"""Marks of a long build in its own database (today: ``inventory demo``).

A build writes a *started* mark in a transaction of its own, then does all its work and
writes the *finished* mark in one transaction. If the build is killed, the work rolls back
and the started mark stays: the database then looks empty but valid, and
:func:`require_finished` says the build did not finish instead of letting it pass as a shop.
The marks are rows of ``import_batch`` (kind ``build:<what>`` and ``built:<what>``), so no
schema change is needed.
"""

from __future__ import annotations

from datetime import UTC, datetime

from sqlalchemy import inspect, select
from sqlalchemy.engine import Engine
from sqlmodel import Session

from inventory.core.db import READ_ONLY
from inventory.core.errors import InventoryError
from inventory.core.tables import ImportBatch

STARTED = "build:"
FINISHED = "built:"


def _mark(session: Session, kind: str, what: str) -> None:
    session.add(ImportBatch(kind=kind + what, fingerprint=what, filename=what, rows=0,
                            applied_at=datetime.now(UTC)))
    session.flush()


def mark_started(session: Session, what: str) -> None:
    """Write in a transaction of its own, committed before the build's work starts."""
    _mark(session, STARTED, what)


def mark_finished(session: Session, what: str) -> None:
    """Write in the build's own transaction, as its last step."""
    _mark(session, FINISHED, what)


def marks(engine: Engine, *, schema_known: bool = False) -> dict[str, str]:
    """What was built in this database: ``{what: "started" | "finished"}`` (empty for a
    database no build made, or one without the tables; ``schema_known`` skips that check
    when the caller has verified the schema already)."""
    # a plain read: it must not wait for the write lock a running build holds
    with engine.execution_options(**{READ_ONLY: True}).connect() as conn:
        if not schema_known and not inspect(conn).has_table(ImportBatch.__tablename__):
            return {}
        kinds = conn.execute(select(ImportBatch.kind).where(
            ImportBatch.kind.like(STARTED + "%") | ImportBatch.kind.like(FINISHED + "%"))
            ).scalars().all()
    out: dict[str, str] = {}
    for k in kinds:
        if k.startswith(STARTED):
            out.setdefault(k[len(STARTED):], "started")
    for k in kinds:
        if k.startswith(FINISHED):
            out[k[len(FINISHED):]] = "finished"
    return out


def require_finished(engine: Engine, what: str, hint: str) -> None:
    """Raise when a build of ``what`` started in this database and did not finish (the
    schema is known to be current: one SELECT on the small import_batch table)."""
    if marks(engine, schema_known=True).get(what) == "started":
        url = engine.url.render_as_string(hide_password=True)
        raise InventoryError(f"{what} build did not finish: {url} holds an unfinished {what} "
                             "database", kind="schema", hint=hint)
