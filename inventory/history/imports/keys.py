"""Idempotency: each unit of a file (a job, or a row) has a key, the SHA-256 of its content
and of how many identical units came before it in the file. Applying a unit records its key
in ``imported_row``, so a re-run of the same file finds every unit already applied."""

from __future__ import annotations

import hashlib
from collections.abc import Sequence
from typing import Any

from sqlmodel import Session

from inventory.core.tables import ImportedRow
from inventory.history.bulk_jobs import analyze, bulk_insert, present
from inventory.history.imports.report import Unit


def key(kind: str, *parts: Any) -> str:
    """A row key: the SHA-256 of the repr of plain values (text, numbers, None, tuples)."""
    return hashlib.sha256(repr((kind, *parts)).encode("utf-8")).hexdigest()


def occurrence_keys(kind: str, contents: list[tuple]) -> list[str]:
    """Keys that stay the same on a re-import: the content, plus how many identical rows
    came before it in the file."""
    seen: dict[tuple, int] = {}
    out = []
    for c in contents:
        n = seen.get(c, 0)
        seen[c] = n + 1
        out.append(key(kind, n, *c))
    return out


def mark_applied(session: Session, kind: str, units: list[Unit]) -> None:
    """Units whose key is recorded are ``applied``."""
    done = present(session, ImportedRow.row_key, (u.key for u in units),
                   ImportedRow.kind == kind)
    for u in units:
        if u.key in done:
            u.status = "applied"


def record_keys(session: Session, kind: str, units: Sequence[Unit], batch_id: int) -> None:
    """Record the keys of the units this batch applied."""
    rows = [dict(kind=kind, row_key=u.key, batch_id=batch_id)
            for u in units if u.status == "new"]
    bulk_insert(session, ImportedRow.__table__, rows)
    if len(rows) > 1000:
        analyze(session, "imported_row")
