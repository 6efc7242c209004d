"""Steps every import kind shares once its rows are typed: the context a kind works in,
one unit per row with its idempotency key, code checks against the database, and running
each unit in its own savepoint so every failing row is found."""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass
from datetime import date
from pathlib import Path
from typing import Any

from sqlmodel import Session, select

from inventory.core import lookup
from inventory.core.errors import InventoryError, Problem, Source
from inventory.history.bulk_jobs import CatalogIndex
from inventory.history.imports.keys import occurrence_keys
from inventory.history.imports.report import Event, ImportReport, ImportSettings, Unit
from inventory.sheets.fuzzy import HeaderMap
from inventory.sheets.rows import TypedRows
from inventory.sheets.source import SourceSheet


@dataclass
class Context:
    """One file's import in progress: where it reads, what it has found so far and, for the
    run step, whether it writes (``apply``), the batch it writes under and the events a
    history replay runs between its jobs."""

    session: Session
    settings: ImportSettings
    sheet: SourceSheet
    hmap: HeaderMap
    report: ImportReport
    index: CatalogIndex
    path: Path
    apply: bool = False
    batch_id: int | None = None
    events: Sequence[Event] = ()

    def src(self, row: int, name: str | None = None) -> Source:
        t = self.sheet.table
        m = self.hmap.matches.get(name) if name else None
        if m is None:
            return Source(t.file, t.sheet, row)
        return Source(t.file, t.sheet, row, m.column + 1, m.header)

    def problem(self, row: int, name: str | None, message: str, *, kind: str = "invalid",
                hint: str | None = None) -> None:
        self.report.problems.append(Problem(message, kind=kind, source=self.src(row, name),
                                            hint=hint))


def suggest_hint(code: str, choices: list[str]) -> str | None:
    return lookup.did_you_mean(code, choices)


def row_units(ctx: Context, typed: TypedRows, fields: Sequence[str]) -> list[Unit]:
    contents = [tuple(plain(r.values.get(f)) for f in fields) for r in typed.rows]
    keys = occurrence_keys(ctx.settings.kind, contents)
    return [Unit(k, [r], r.values.get("date"), ctx.src(r.row), payload=r.values,
                 status="new" if r.ok else "invalid")
            for k, r in zip(keys, typed.rows, strict=True)]


def plain(v: Any) -> Any:
    return v.isoformat() if isinstance(v, date) else v


def check_codes(ctx: Context, units: list[Unit], name: str, valid: dict[str, str],
                what: str, hint: str) -> None:
    hints: dict[str, str | None] = {}
    for u in units:
        code = u.payload.get(name) if u.payload else None
        if not code:
            continue
        found = valid.get(code) or valid.get(str(code).upper())
        if found is None:
            if code not in hints:
                hints[code] = suggest_hint(code, list(dict.fromkeys(valid.values())))
            close = hints[code]
            ctx.problem(u.rows[0].row, name, f"unknown {what} {code!r}"
                        + (f" ({close})" if close else ""), kind="unknown", hint=hint)
            u.status = "invalid"
        else:
            u.payload[name] = found


def codes_of(session: Session, model) -> dict[str, str]:
    out: dict[str, str] = {}
    for c in session.exec(select(model.code)):
        out[c] = c
        out.setdefault(c.upper(), c)
    return out


def per_row(ctx: Context, units: list[Unit], effect: Callable[[Unit], str], *,
            order_by_day: bool) -> dict[str, int]:
    """Run ``effect`` for each new unit in its own savepoint: a failing row is reported at
    its row and undone, and the others still run so every problem is found."""
    counts: dict[str, int] = {}
    todo = [u for u in units if u.status == "new"]
    if order_by_day:
        todo.sort(key=lambda u: (u.day or date.min))
    for u in todo:
        sp = ctx.session.begin_nested()
        try:
            what = effect(u)
            sp.commit()
            counts[what] = counts.get(what, 0) + 1
        except InventoryError as exc:
            sp.rollback()
            u.status = "invalid"
            for p in exc.problems:
                ctx.report.problems.append(Problem(p.message, kind=p.kind, source=u.source,
                                                   hint=exc.hint))
    return counts

