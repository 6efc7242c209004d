"""Preview or apply one file: read and map (:mod:`.headers`), type every cell, build the
kind's units and check them (:mod:`.history`, :mod:`.counts`, :mod:`.receipts`,
:mod:`.catalog`), skip what was applied before (:mod:`.keys`), run the units, and finish:
a preview rolls everything back, ``apply`` writes all of it or raises with every problem."""

from __future__ import annotations

import gc
from collections.abc import Callable, Iterator, Sequence
from contextlib import contextmanager
from dataclasses import dataclass, replace
from datetime import UTC, date, datetime
from pathlib import Path
from typing import Any

from sqlmodel import Session, select

from inventory.core.errors import InventoryError, Problem, Source
from inventory.core.tables import ImportBatch
from inventory.history.bulk_jobs import CatalogIndex
from inventory.history.imports import catalog, counts, history, receipts
from inventory.history.imports.headers import absorb, read_and_map
from inventory.history.imports.keys import mark_applied, record_keys
from inventory.history.imports.recorded import mark_recorded
from inventory.history.imports.report import Event, ImportReport, ImportSettings, Unit
from inventory.history.imports.steps import Context
from inventory.sheets.kinds import DATE, KINDS, SCHEMAS
from inventory.sheets.rows import DateRules, TypedRows, type_rows


@dataclass(frozen=True)
class Kind:
    """One import kind: ``build`` groups typed rows into units and checks them against the
    database; ``run`` carries them out (writing only when the context says ``apply``)."""

    build: Callable[[Context, TypedRows], list[Unit]]
    run: Callable[[Context, list[Unit]], None]
    settle: Callable[[Context, list[Unit]], None] | None = None  # after the key check


IMPORTERS: dict[str, Kind] = {
    "history": Kind(history.build, history.run, mark_recorded),
    "counts": Kind(counts.build, counts.run),
    "receipts": Kind(receipts.build, receipts.run),
    "catalog": Kind(catalog.build, catalog.run),
}


def run_import(session: Session, path: str | Path, settings: ImportSettings, *,
               apply: bool = False, events: Sequence[Event] = ()) -> ImportReport:
    """Preview (``apply=False``) or apply one file; see the package docstring.

    A preview leaves the database as it was. ``apply`` writes in the caller's transaction
    and raises :class:`InventoryError` with every problem when anything is invalid or a fork
    model still needs a decision; the caller's transaction then rolls back.
    """
    if settings.kind not in KINDS:
        raise InventoryError(f"unknown import kind {settings.kind!r}",
                             hint=f"use one of {', '.join(KINDS)}")
    path = Path(path)
    with _bulk_work():
        if apply:
            return _run(session, path, settings, apply=True, events=events)
        sp = session.begin_nested()
        try:
            return _run(session, path, settings, apply=False, events=events)
        finally:
            sp.rollback()


@contextmanager
def _bulk_work() -> Iterator[None]:
    """Pause Python's cyclic garbage collector while a file is worked through: a 100,000-row
    import allocates millions of small objects that live until the end, and the collector
    would walk them again and again (a third of the time) to find no cycles."""
    was = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was:
            gc.enable()


def preview_import(session: Session, path: str | Path, settings: ImportSettings) -> ImportReport:
    return run_import(session, path, settings, apply=False)


def apply_import(session: Session, path: str | Path, settings: ImportSettings, *,
                 events: Sequence[Event] = ()) -> ImportReport:
    return run_import(session, path, settings, apply=True, events=events)


def _run(session: Session, path: Path, settings: ImportSettings, *, apply: bool,
         events: Sequence[Event]) -> ImportReport:
    sheet, hmap, rep = read_and_map(path, settings)
    if any(p.kind in ("schema", "usage") for p in rep.problems):
        return _finish(session, rep, [], apply)  # rows cannot be read without their columns
    today = settings.today or date.today()
    skip = {(f.row, f.column) for f in sheet.formulas if not f.has_value}
    rules = DateRules(DATE, settings.date_order, sheet.date1904, settings.earliest, today)
    typed = type_rows(sheet.table, SCHEMAS[settings.kind], hmap, date_rules=rules,
                      skip_cells=skip)
    absorb(rep, typed)
    if not typed.read:
        t = sheet.table
        where = f"sheet {t.sheet!r}" if t.sheet else "the file"
        rep.problems.append(Problem(
            f"{where} has a header row (row {t.header_row}) but no data rows",
            kind="empty", source=Source(t.file, t.sheet),
            hint="fill in the rows below the header, or export the sheet that holds them"))
        return _finish(session, rep, [], apply)
    ctx = Context(session, settings, sheet, hmap, rep, CatalogIndex(session), path,
                  events=events)
    importer = IMPORTERS[settings.kind]
    units = importer.build(ctx, typed)
    mark_applied(session, settings.kind, units)
    if importer.settle is not None:
        importer.settle(ctx, units)
    rep.previous = [
        {"batch": b.id, "applied_at": b.applied_at.isoformat(), "rows": b.rows}
        for b in session.exec(select(ImportBatch).where(
            ImportBatch.fingerprint == rep.fingerprint, ImportBatch.kind == settings.kind))]
    batch = None
    todo = [u for u in units if u.status == "new"]
    if apply and todo and not rep.problems and not any(u.status == "review" for u in units):
        batch = ImportBatch(kind=settings.kind, fingerprint=rep.fingerprint, filename=path.name,
                            rows=len(todo), applied_at=datetime.now(UTC))
        session.add(batch)
        session.flush()
        rep.batch_id = batch.id
    ctx.apply = apply and batch is not None
    ctx.batch_id = batch.id if batch else None
    importer.run(ctx, units)
    return _finish(session, rep, units, apply, batch)


def _finish(session: Session, rep: ImportReport, units: list[Unit], apply: bool,
            batch: ImportBatch | None = None) -> ImportReport:
    rep.problems.sort(key=_place)
    rep.units = len(units)
    rep.new = sum(u.status == "new" for u in units)
    rep.already = sum(u.status == "applied" for u in units)
    rep.invalid = sum(u.status == "invalid" for u in units)
    rep.review = sum(u.status == "review" for u in units)
    if apply:
        if not rep.ok:
            err = rep.error()
            err.report = rep  # type: ignore[attr-defined]  # the CLI shows it with the errors
            raise err
        if batch is not None:
            record_keys(session, rep.kind, units, batch.id)
            rep.applied = True
    return rep


def _place(p: Problem) -> tuple:
    """File-level problems first, then by row and column."""
    s = p.source
    if s is None:
        return (0, "", 0, 0)
    return (1, s.file or "", s.row or 0, s.column or 0)


def settings_for(kind: str, **kw: Any) -> ImportSettings:
    """Settings with defaults, for callers that know only a few options."""
    return replace(ImportSettings(kind=kind), **kw)
