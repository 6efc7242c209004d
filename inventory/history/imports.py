"""Importing the shop's own spreadsheets: ``history`` (service jobs with the parts or kits
they used), ``counts`` (shelf counts), ``receipts`` (deliveries) and ``catalog`` (part
updates), from csv or xlsx.

One file goes through these steps, each collecting problems rather than stopping:

1. read (:mod:`inventory.sheets.source`): the sheet, the header row, the date system,
   formula and merged cells;
2. map headers (:func:`inventory.sheets.fuzzy.match_headers`): names and aliases, then
   rapidfuzz above a threshold; ``--map HEADER=FIELD`` overrides;
3. type every cell (:mod:`inventory.sheets.rows`): dates with the file's day/month order,
   serials in the workbook's date system, decimal commas, units on dimensions;
4. check against the database and group rows into units (a job, or one row): unknown codes,
   fork models in free text (:func:`resolve_forks`), jobs recorded before, stock;
5. run the units: a preview simulates (history) or runs inside a savepoint that is rolled
   back (the other kinds), so it finds every problem the real run would; ``apply`` writes
   all of it in the caller's transaction or raises with every problem and writes nothing.

Re-runs are no-ops: each applied unit leaves a row key (a hash of its content) in
``imported_row``, and the file its fingerprint in ``import_batch``.
"""

from __future__ import annotations

import gc
import hashlib
from collections.abc import Callable, Iterable, Iterator, Sequence
from contextlib import contextmanager
from dataclasses import dataclass, field, replace
from datetime import UTC, date, datetime
from operator import itemgetter
from pathlib import Path
from typing import Any

from sqlmodel import Session, select

from inventory.core import lookup
from inventory.core.errors import InventoryError, Problem, Source, column_letter
from inventory.core.model import PartKind
from inventory.core.tables import (
    ForkAlias,
    ForkFamily,
    ImportBatch,
    ImportedRow,
    Location,
    Lot,
    Part,
    ServiceJob,
    Supplier,
    SupplierItem,
)
from inventory.history.jobs import (  # noqa: F401 (fork resolution is part of this API)
    CatalogIndex,
    JobItem,
    JobSpec,
    JobWriter,
    StockBook,
    analyze,
    bulk_insert,
    existing_refs,
    fork_choices,
    fork_key,
    noon,
    present,
    resolve_fork_text,
)
from inventory.sheets.columns import Schema, normalise
from inventory.sheets.dates import Order
from inventory.sheets.fuzzy import Candidate, HeaderMap, HeaderMatch, match_headers
from inventory.sheets.kinds import (  # noqa: F401 (the schemas are part of this API)
    CATALOG,
    CODE_HINT,
    COUNTS,
    DATE,
    EXAMPLES,
    HISTORY,
    KINDS,
    RECEIPTS,
    SCHEMAS,
)
from inventory.sheets.review import ReviewItem, read_resolutions, write_review
from inventory.sheets.rows import TypedRow, TypedRows, is_totals_row, type_rows
from inventory.sheets.source import SourceSheet, read_source
from inventory.stock import ledger

# --- settings and report ----------------------------------------------------------------


@dataclass(frozen=True)
class ImportSettings:
    """Everything that shapes one import, with documented defaults.

    ``header_threshold``: rapidfuzz score (0-100) a header needs to be taken for a field it
    does not name exactly. ``accept_score`` and ``accept_margin``: a fork text resolves on its
    own when its best family scores at least this and leads the next by the margin; other
    texts go to review with up to ``candidates`` suggestions scoring ``candidate_floor`` or
    more. ``earliest``/``today``: the plausible range of dates (a later date is "in the
    future"). ``stock``: history takes its parts from stock (False records the jobs only, for
    history from before the ledger started).
    """

    kind: str
    sheet: str | None = None
    mapping: tuple[tuple[str, str], ...] = ()
    resolutions: Path | None = None
    review: Path | None = None
    date_order: Order | None = None
    stock: bool = True
    today: date | None = None
    earliest: date = date(1980, 1, 1)
    header_threshold: float = 85.0
    accept_score: float = 90.0
    accept_margin: float = 8.0
    candidate_floor: float = 0.0
    candidates: int = 5
    user: str | None = None


@dataclass
class ForkDecision:
    text: str
    code: str | None
    how: str  # code, alias, resolution, fuzzy, review
    score: float
    rows: int
    first: Source
    candidates: list[Candidate] = field(default_factory=list)

    def to_dict(self) -> dict:
        return {"text": self.text, "fork": self.code, "how": self.how,
                "score": round(self.score, 1), "rows": self.rows, "first_cell": _cell(self.first),
                "candidates": [c.to_dict() for c in self.candidates]}


@dataclass
class ImportReport:
    kind: str
    file: str
    sheet: str | None = None
    header_row: int = 1
    encoding: str | None = None
    date1904: bool = False
    mapping: list[HeaderMatch] = field(default_factory=list)
    ignored: list[str] = field(default_factory=list)
    dates: str = ""
    rows: int = 0
    unit: str = "row"
    units: int = 0
    new: int = 0
    already: int = 0
    invalid: int = 0
    review: int = 0
    problems: list[Problem] = field(default_factory=list)
    warnings: list[Problem] = field(default_factory=list)
    forks: list[ForkDecision] = field(default_factory=list)
    review_path: str | None = None
    fingerprint: str = ""
    previous: list[dict] = field(default_factory=list)
    applied: bool = False
    batch_id: int | None = None
    effects: dict[str, int] = field(default_factory=dict)

    @property
    def ok(self) -> bool:
        return not self.problems and not self.review

    def hint(self) -> str:
        hints = list(dict.fromkeys(p.hint for p in self.problems if p.hint))
        if self.review:
            where = self.review_path or "the review workbook"
            hints.append(f"fill in the 'fork family' column of {where} and run again with "
                         f"--resolutions {self.review_path or 'FILE'}")
        hints.append("nothing was written")
        return "; ".join(hints)

    def error(self) -> InventoryError:
        problems = list(self.problems)
        for f in self.forks:
            if f.how == "review":
                best = ", ".join(f"{c.code} {c.score:.0f}" for c in f.candidates[:3]) or "none"
                problems.append(Problem(
                    f"fork model {f.text!r} ({f.rows} row(s)) needs a decision (best: {best})",
                    kind="review", source=f.first))
        return InventoryError(problems, hint=self.hint())

    def to_dict(self) -> dict:
        return {
            "kind": self.kind, "file": self.file, "sheet": self.sheet,
            "header_row": self.header_row, "encoding": self.encoding,
            "date_system": 1904 if self.date1904 else 1900,
            "mapping": [m.to_dict() for m in self.mapping], "ignored": self.ignored,
            "dates": self.dates, "rows": self.rows, "unit": self.unit, "units": self.units,
            "new": self.new, "already_applied": self.already, "invalid": self.invalid,
            "needs_review": self.review,
            "problems": [p.to_dict() | {"text": str(p)} for p in self.problems],
            "warnings": [p.to_dict() | {"text": str(p)} for p in self.warnings],
            "forks": [f.to_dict() for f in self.forks], "review_workbook": self.review_path,
            "fingerprint": self.fingerprint, "previous_batches": self.previous,
            "applied": self.applied, "batch": self.batch_id, "effects": self.effects,
        }


def _cell(src: Source | None) -> str:
    if src is None or src.row is None:
        return ""
    return f"{column_letter(src.column) if src.column else ''}{src.row}"


@dataclass(frozen=True)
class Event:
    """Something else that happens on a day while history is replayed (a delivery, a count):
    ``run`` changes stock through the ledger and returns the part codes it touched. Events
    run before the jobs of their day when ``order`` < 1, after them otherwise."""

    day: date
    order: int
    run: Callable[[Session], Iterable[str]]


@dataclass
class Unit:
    """What one key stands for: a job (history) or a row (the other kinds)."""

    key: str
    rows: list[TypedRow]
    day: date | None
    source: Source | None
    payload: Any = None
    status: str = "new"  # new, applied, invalid, review


# --- the engine -------------------------------------------------------------------------


@dataclass
class _Context:
    session: Session
    settings: ImportSettings
    sheet: SourceSheet
    hmap: HeaderMap
    report: ImportReport
    index: CatalogIndex
    path: Path

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


def run_import(session: Session, path: str | Path, settings: ImportSettings, *,
               apply: bool = False, events: Sequence[Event] = ()) -> ImportReport:
    """Preview (``apply=False``) or apply one file; see the module docstring.

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


def _header_scorer(schema: Schema, overrides: Iterable[str]) -> Callable[[list[Any]], float]:
    names: set[str] = set()
    for col in schema.columns:
        names |= col.headers()
    names |= {normalise(h) for h in overrides}
    names.discard("")

    def score(row: list[Any]) -> float:
        return float(sum(1 for v in row if isinstance(v, str) and normalise(v) in names))
    return score


def _run(session: Session, path: Path, settings: ImportSettings, *, apply: bool,
         events: Sequence[Event]) -> ImportReport:
    schema = SCHEMAS[settings.kind]
    mapping = dict(settings.mapping)
    sheet = read_source(path, _header_scorer(schema, mapping), sheet=settings.sheet)
    table = sheet.table
    rep = ImportReport(settings.kind, path.name, table.sheet, table.header_row, sheet.encoding,
                       sheet.date1904)
    rep.fingerprint = hashlib.sha256(path.read_bytes()).hexdigest()
    rep.unit = "job" if settings.kind == "history" else "row"
    if sheet.encoding == "cp1252":
        rep.warnings.append(Problem("read as Windows-1252, not UTF-8: check accented text",
                                    kind="encoding", source=Source(path.name),
                                    severity="warning"))
    for r in sheet.above:
        rep.warnings.append(Problem("skipped a line above the header row", kind="skipped",
                                    source=Source(path.name, table.sheet, r),
                                    severity="warning"))
    hmap = match_headers(table.header, schema, overrides=mapping,
                         threshold=settings.header_threshold,
                         source=Source(path.name, table.sheet, table.header_row))
    rep.mapping = sorted(hmap.matches.values(), key=lambda m: m.column)
    rep.ignored = hmap.ignored
    rep.problems += hmap.problems
    rep.problems += _sheet_problems(sheet, hmap, rep)
    if settings.kind == "history" and not ({"item", "kit"} & set(hmap.matches)):
        rep.problems.append(Problem(
            "missing a column for what the job used: 'item' (a part or kit code per row) or "
            f"'kit' (headers found: {', '.join(repr(h) for h in table.header if h) or 'none'})",
            kind="schema", source=Source(path.name, table.sheet, table.header_row),
            hint='name the column with --map "HEADER=item" or --map "HEADER=kit"'))
    if any(p.kind in ("schema", "usage") for p in rep.problems):
        return _finish(session, rep, [], apply)  # rows cannot be read without their columns
    today = settings.today or date.today()
    skip = {(f.row, f.column) for f in sheet.formulas if not f.has_value}
    typed = type_rows(table, schema, hmap, date_fields=DATE, date_order=settings.date_order,
                      date1904=sheet.date1904, earliest=settings.earliest, latest=today,
                      skip_cells=skip)
    _absorb(rep, typed)
    ctx = _Context(session, settings, sheet, hmap, rep, CatalogIndex(session), path)
    units = _BUILD[settings.kind](ctx, typed)
    _mark_applied(session, settings.kind, units)
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
    _RUN[settings.kind](ctx, units, apply=apply and batch is not None,
                        batch_id=batch.id if batch else None, events=events)
    return _finish(session, rep, units, apply, batch)


def _absorb(rep: ImportReport, typed: TypedRows) -> None:
    rep.rows = typed.read
    rep.problems += typed.problems
    rep.warnings += typed.warnings
    rep.dates = "; ".join(d.describe() for d in typed.dates.values())


def _sheet_problems(sheet: SourceSheet, hmap: HeaderMap, rep: ImportReport) -> list[Problem]:
    out: list[Problem] = []
    t = sheet.table
    for r0, c0, r1, c1 in sheet.merged:
        if r0 <= t.header_row <= r1 and c1 > c0:
            out.append(Problem(
                f"merged cells {column_letter(c0)}{r0}:{column_letter(c1)}{r1} in the header row",
                kind="schema", source=Source(t.file, t.sheet, t.header_row, c0),
                hint="unmerge the header cells so each column has its own header"))
        elif r1 > t.header_row and c1 >= c0:
            rep.warnings.append(Problem(
                f"merged cells {column_letter(c0)}{r0}:{column_letter(c1)}{r1}: only the first "
                "cell holds the value", kind="merged", source=Source(t.file, t.sheet, r0, c0),
                severity="warning"))
    used = {m.column + 1: m.header for m in hmap.matches.values()}
    cached = [f for f in sheet.formulas if f.has_value and f.row > t.header_row]
    if cached:
        f = cached[0]
        rep.warnings.append(Problem(
            f"{len(cached)} formula cell(s) read as their saved values (e.g. "
            f"{column_letter(f.column)}{f.row} ={f.formula})", kind="formula",
            source=Source(t.file, t.sheet), severity="warning"))
    totals = {r for r, values in t.rows if is_totals_row(values)} if sheet.formulas else set()
    for f in sheet.formulas:
        if not f.has_value and f.row > t.header_row and f.column in used and f.row not in totals:
            out.append(Problem(
                f"formula ={f.formula} has no saved value", kind="formula",
                source=Source(t.file, t.sheet, f.row, f.column, used[f.column]),
                hint="open the file in a spreadsheet program and save it, or paste the "
                     "values over the formulas"))
    return out


def _key(kind: str, *parts: Any) -> str:
    """A row key: the SHA-256 of the repr of plain values (text, numbers, None, tuples)."""
    return hashlib.sha256(repr((kind, *parts)).encode("utf-8")).hexdigest()


def _occurrence_keys(kind: str, contents: list[tuple]) -> list[str]:
    """Keys that stay the same on a re-import: the content, plus how many identical rows
    came before it in the file."""
    seen: dict[tuple, int] = {}
    out = []
    for c in contents:
        n = seen.get(c, 0)
        seen[c] = n + 1
        out.append(_key(kind, n, *c))
    return out


def _mark_applied(session: Session, kind: str, units: list[Unit]) -> None:
    done = present(session, ImportedRow.row_key, (u.key for u in units),
                   ImportedRow.kind == kind)
    for u in units:
        if u.key in done:
            u.status = "applied"


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
            rows = [dict(kind=rep.kind, row_key=u.key, batch_id=batch.id)
                    for u in units if u.status == "new"]
            bulk_insert(session, ImportedRow.__table__, rows)
            if len(rows) > 1000:
                analyze(session, "imported_row")
            rep.applied = True
    return rep


def _place(p: Problem) -> tuple:
    """File-level problems first, then by row and column."""
    s = p.source
    if s is None:
        return (0, "", 0, 0)
    return (1, s.file or "", s.row or 0, s.column or 0)


def _suggest_hint(code: str, choices: list[str]) -> str | None:
    return lookup.did_you_mean(code, choices)


# --- history ------------------------------------------------------------------------------


def resolve_forks(ctx: _Context, texts: dict[str, tuple[str, Source, int]]
                  ) -> dict[str, ForkDecision]:
    """Decide every distinct fork text of the file (key -> decision), using the answers in
    ``--resolutions`` when given, and write the review workbook for what is left."""
    s = ctx.settings
    choices, remembered, codes = fork_choices(ctx.session)
    answers: dict[str, tuple[str, Source]] = {}
    if s.resolutions is not None:
        valid = {c.code.upper(): c.code for c in choices}
        got, problems = read_resolutions(s.resolutions, valid)
        ctx.report.problems += problems
        answers = {fork_key(t): v for t, v in got.items()}
    out: dict[str, ForkDecision] = {}
    for key, (text, first, nrows) in texts.items():
        code, how, score, cands = resolve_fork_text(
            text, choices, remembered, codes, accept_score=s.accept_score,
            accept_margin=s.accept_margin, floor=s.candidate_floor, limit=s.candidates)
        if key in answers and how not in ("code",):
            code, how, score = answers[key][0], "resolution", 100.0
        out[key] = ForkDecision(text, code, how, score, nrows, first, cands)
    ctx.report.forks = sorted(out.values(), key=lambda d: (d.how != "review", -d.rows, d.text))
    if any(d.how == "review" for d in ctx.report.forks):
        target = s.review or ctx.path.with_name(ctx.path.stem + ".review.xlsx")
        asked = [d for d in ctx.report.forks if d.how in ("review", "resolution")]
        try:
            write_review(target, [ReviewItem(d.text, d.rows, _cell(d.first),
                                             tuple(d.candidates),
                                             d.code if d.how == "resolution" else None)
                                  for d in asked],
                         [(c.code, c.label) for c in choices])
            ctx.report.review_path = str(target)
        except OSError as exc:
            ctx.report.problems.append(Problem(
                f"cannot write the review workbook {target} ({exc.strerror or exc})",
                kind="usage", hint="choose where it goes with --review FILE.xlsx"))
    return out


JOB_FIELDS = ("date", "fork", "service", "hours", "fork_ref")  # the same on every line


def _group_jobs(ctx: _Context, typed: TypedRows) -> dict[str, list[TypedRow]]:
    """Rows by job reference (file order); without a job column every row is a job."""
    has_ref = "job" in ctx.hmap.matches
    groups: dict[str, list[TypedRow]] = {}
    anon = 0
    for row in typed.rows:
        ref = row.values.get("job") if has_ref else None
        if not ref:
            if has_ref and row.ok:
                ctx.problem(row.row, "job", "job is required but empty",
                            hint="give every row its job reference")
                row.ok = False
            anon += 1
            ref = f"\x00{anon}"
        groups.setdefault(str(ref), []).append(row)
    return groups


_JOB_KEY = itemgetter(*JOB_FIELDS)


def _consistent(ctx: _Context, ref: str, rows: list[TypedRow]) -> bool:
    """The job's date, fork, service, hours and fork reference agree on all its lines."""
    first = _JOB_KEY(rows[0].values)
    if all(_JOB_KEY(r.values) == first for r in rows):
        return True
    ok = True
    for name in JOB_FIELDS:
        base, base_row = None, None
        for r in rows:
            val = r.values.get(name)
            if val is None:
                continue
            if base is None:
                base, base_row = val, r.row
            elif val != base:
                ctx.problem(r.row, name, f"job {ref}: {name} {_show(val)} differs from "
                            f"{_show(base)} on row {base_row}", kind="conflict",
                            hint="one job has one date, fork and service: check the job "
                                 "references")
                ok = False
    return ok


def _job_items(ctx: _Context, rows: list[TypedRow], unknown: dict[str, str | None]
               ) -> tuple[list[JobItem], bool]:
    """What the job's lines used, with unknown codes and non-kits in the kit column
    reported at their cells."""
    items: list[JobItem] = []
    ok = True
    part_of = ctx.index.part
    item_col = "item" if "item" in ctx.hmap.matches else "kit"
    for r in rows:
        v = r.values
        item, kit, qty = v.get("item"), v.get("kit"), v.get("qty")
        if not item and not kit:
            if r.ok:
                ctx.problem(r.row, item_col, "no part or kit in this row",
                            hint="each row names the part or kit the job used")
            ok = False
            continue
        for name, code, n in (("item", item, qty or 1), ("kit", kit, 1 if item else qty or 1)):
            if not code:
                continue
            part = part_of(code)
            if part is None:
                if code not in unknown:
                    unknown[code] = _suggest_hint(code, list(ctx.index.parts))
                close = unknown[code]
                ctx.problem(r.row, name, f"unknown part or kit {code!r}"
                            + (f" ({close})" if close else ""), kind="unknown", hint=CODE_HINT)
                ok = False
                continue
            if name == "kit" and part.kind != PartKind.KIT:
                ctx.problem(r.row, name, f"{code!r} is a {part.kind}, not a kit",
                            hint="put loose parts in the item column")
                ok = False
                continue
            items.append(JobItem(part.code, n))
    return items, ok and all(r.ok for r in rows)


def _build_history(ctx: _Context, typed: TypedRows) -> list[Unit]:
    groups = _group_jobs(ctx, typed)
    fork_texts: dict[str, tuple[str, Source, int]] = {}
    keys_of: dict[str, str] = {}
    unknown: dict[str, str | None] = {}
    units: list[Unit] = []
    contents: list[tuple] = []
    for ref, rows in groups.items():
        first = rows[0]
        v0 = first.values
        ok = _consistent(ctx, ref, rows) if len(rows) > 1 else first.ok
        items, items_ok = _job_items(ctx, rows, unknown)
        ok = ok and items_ok and bool(items)
        fork_text = v0.get("fork") or next((r.values["fork"] for r in rows
                                            if r.values.get("fork")), None)
        fk = ""
        if fork_text:
            fk = keys_of.get(fork_text) or keys_of.setdefault(fork_text, fork_key(fork_text))
            t, src, n = fork_texts.get(fk) or (fork_text, ctx.src(first.row, "fork"), 0)
            fork_texts[fk] = (t, src, n + 1)
        day = v0.get("date") or next((r.values["date"] for r in rows if r.values.get("date")),
                                     None)
        service, hours, fork_ref = v0.get("service"), v0.get("hours"), v0.get("fork_ref")
        anonymous = ref.startswith("\x00")
        contents.append((None if anonymous else ref, day.isoformat() if day else None, fk,
                         str(service) if service else None, hours, fork_ref,
                         tuple(sorted((i.code, i.qty) for i in items))))
        units.append(Unit("", rows, day, None, payload=(
            None if anonymous else ref, day, fk, service, tuple(items), hours, fork_ref),
            status="new" if ok else "invalid"))
    for u, k in zip(units, _occurrence_keys("history", contents), strict=True):
        u.key = k
    decisions = resolve_forks(ctx, fork_texts) if fork_texts else {}
    for u in units:
        ref, day, fk, service, items, hours, fork_ref = u.payload
        d = decisions.get(fk)
        if u.status == "new" and d is not None and d.code is None:
            u.status = "review"
        code = d.code if d is not None else None
        u.payload = JobSpec(ref or f"IMP-{u.key[:12].upper()}", day, code or "", service, items,
                            hours, fork_ref) if (day and service) else None
        if u.payload is None and u.status == "new":
            u.status = "invalid"
    return units


def _show(v: Any) -> str:
    return v.isoformat() if isinstance(v, date) else repr(v)


def _run_history(ctx: _Context, units: list[Unit], *, apply: bool, batch_id: int | None,
                 events: Sequence[Event]) -> None:
    session, rep = ctx.session, ctx.report
    _mark_recorded(ctx, units)
    pending = [u for u in units if u.status in ("new", "review") and u.payload is not None]
    if apply:
        _remember_aliases(ctx)
    book = StockBook(session, write=apply, user=ctx.settings.user) if ctx.settings.stock else None
    writer = JobWriter(session, ctx.index, book, batch_id=batch_id)
    timeline: list[tuple[date, int, int, Any]] = []
    for n, u in enumerate(pending):
        timeline.append((u.day, 1, n, u))
    for n, ev in enumerate(events):
        timeline.append((ev.day, ev.order if ev.order < 1 else ev.order + 1, n, ev))
    timeline.sort(key=lambda e: (e[0], e[1], e[2]))
    jobs = lines = 0
    for _, _, _, what in timeline:
        if isinstance(what, Event):
            if book is not None:
                book.flush()
            touched = list(what.run(session))
            if book is not None:
                for code in dict.fromkeys(touched):
                    part = ctx.index.part(code)
                    if part is not None:
                        book.reload(part.id)
            continue
        u = what
        if u.status != "new":
            continue
        try:
            writer.add(u.payload)
            jobs += 1
            lines += len(u.payload.items)
        except InventoryError as exc:
            u.status = "invalid"
            p = exc.problems[0]
            rep.problems.append(Problem(p.message, kind=p.kind,
                                        source=ctx.src(u.rows[0].row,
                                                       "item" if "item" in ctx.hmap.matches
                                                       else "kit"),
                                        hint=exc.hint))
    rep.effects = {"jobs": jobs, "lines": lines}
    if book is not None:
        rep.effects["movements"] = book.booked
    if apply and not rep.problems:
        writer.finish()


def _mark_recorded(ctx: _Context, units: list[Unit]) -> None:
    """Jobs whose reference is already recorded: the same job (same day and service, and
    the same fork family when known) counts as already applied, another is a conflict."""
    refs = [u.payload.ref for u in units if u.status in ("new", "review") and u.payload]
    taken = existing_refs(ctx.session, refs)
    if not taken:
        return
    recorded: dict[str, tuple] = {}
    chunk = sorted(taken)
    for i in range(0, len(chunk), 500):
        for ref, day, code, service in ctx.session.exec(
                select(ServiceJob.ref, ServiceJob.day, ForkFamily.code, ServiceJob.service_level)
                .join(ForkFamily, ForkFamily.id == ServiceJob.fork_family_id)
                .where(ServiceJob.ref.in_(chunk[i:i + 500]))):
            recorded[ref] = (day, code, service)
    for u in units:
        if u.status not in ("new", "review") or not u.payload or u.payload.ref not in taken:
            continue
        day, code, service = recorded[u.payload.ref]
        spec = u.payload
        if spec.day == day and str(spec.service) == service and spec.fork in ("", code):
            u.status = "applied"
            continue
        u.status = "invalid"
        ctx.problem(u.rows[0].row, "job",
                    f"job {spec.ref} is already recorded as {day.isoformat()} {code} {service}",
                    kind="conflict", hint="a job is imported once: give a corrected job a "
                    "new reference")


def _remember_aliases(ctx: _Context) -> None:
    fams = {c: i for i, c in ctx.session.exec(select(ForkFamily.id, ForkFamily.code))}
    for d in ctx.report.forks:
        if d.how != "resolution" or d.code is None:
            continue
        key = fork_key(d.text)
        row = ctx.session.exec(select(ForkAlias).where(ForkAlias.text == key)).first()
        if row is None:
            ctx.session.add(ForkAlias(text=key, fork_family_id=fams[d.code]))
        else:
            row.fork_family_id = fams[d.code]
            ctx.session.add(row)
    ctx.session.flush()


# --- counts, receipts and catalog ---------------------------------------------------------


def _row_units(ctx: _Context, typed: TypedRows, fields: Sequence[str]) -> list[Unit]:
    contents = [tuple(_plain(r.values.get(f)) for f in fields) for r in typed.rows]
    keys = _occurrence_keys(ctx.settings.kind, contents)
    return [Unit(k, [r], r.values.get("date"), ctx.src(r.row), payload=r.values,
                 status="new" if r.ok else "invalid")
            for k, r in zip(keys, typed.rows, strict=True)]


def _plain(v: Any) -> Any:
    return v.isoformat() if isinstance(v, date) else v


def _check_codes(ctx: _Context, units: list[Unit], name: str, valid: dict[str, str],
                 what: str, hint: str) -> None:
    hints: dict[str, str | None] = {}
    for u in units:
        code = u.payload.get(name) if u.payload else None
        if not code:
            continue
        found = valid.get(code) or valid.get(str(code).upper())
        if found is None:
            if code not in hints:
                hints[code] = _suggest_hint(code, list(dict.fromkeys(valid.values())))
            close = hints[code]
            ctx.problem(u.rows[0].row, name, f"unknown {what} {code!r}"
                        + (f" ({close})" if close else ""), kind="unknown", hint=hint)
            u.status = "invalid"
        else:
            u.payload[name] = found


def _codes(session: Session, model) -> dict[str, str]:
    out: dict[str, str] = {}
    for c in session.exec(select(model.code)):
        out[c] = c
        out.setdefault(c.upper(), c)
    return out


def _build_counts(ctx: _Context, typed: TypedRows) -> list[Unit]:
    units = _row_units(ctx, typed, ("date", "part", "location", "counted"))
    parts = {c: p.code for c, p in ctx.index.parts.items()} | {
        c: p.code for c, p in ctx.index.parts_upper.items()}
    _check_codes(ctx, units, "part", parts, "part", CODE_HINT)
    _check_codes(ctx, units, "location", _codes(ctx.session, Location), "location",
                 "locations are set in the catalog (locations sheet)")
    return units


def _build_receipts(ctx: _Context, typed: TypedRows) -> list[Unit]:
    units = _row_units(ctx, typed, ("date", "supplier", "part", "qty", "unit_cost", "lot",
                                    "cured", "location", "order_ref"))
    parts = {c: p.code for c, p in ctx.index.parts.items()} | {
        c: p.code for c, p in ctx.index.parts_upper.items()}
    _check_codes(ctx, units, "part", parts, "part", CODE_HINT)
    _check_codes(ctx, units, "location", _codes(ctx.session, Location), "location",
                 "locations are set in the catalog (locations sheet)")
    _check_codes(ctx, units, "supplier", _codes(ctx.session, Supplier), "supplier",
                 "suppliers are set in the catalog (suppliers sheet)")
    costed = set(ctx.session.exec(select(Lot.part_id).distinct())) | set(
        ctx.session.exec(select(SupplierItem.part_id).distinct()))
    for u in units:
        v = u.payload
        if u.status == "new" and v.get("unit_cost") is None:
            part = ctx.index.part(v["part"])
            if part is not None and part.id not in costed:
                ctx.problem(u.rows[0].row, "unit_cost", f"no cost known for {part.code}: "
                            "the unit cost is needed for its first delivery",
                            hint="fill in the unit_cost column")
                u.status = "invalid"
    return units


def _build_catalog(ctx: _Context, typed: TypedRows) -> list[Unit]:
    present = [c.name for c in CATALOG.columns if c.name in ctx.hmap.matches]
    units = _row_units(ctx, typed, present)
    seen: dict[str, int] = {}
    for u in units:
        v = u.payload
        code = v.get("code")
        if not code:
            continue
        if code.upper() in seen:
            ctx.problem(u.rows[0].row, "code", f"part {code} appears twice (first on row "
                        f"{seen[code.upper()]})", kind="conflict")
            u.status = "invalid"
            continue
        seen[code.upper()] = u.rows[0].row
        if ctx.index.part(code) is None and not v.get("kind"):
            ctx.problem(u.rows[0].row, "kind" if "kind" in ctx.hmap.matches else "code",
                        f"new part {code} needs a kind",
                        hint=f"kinds are {', '.join(PartKind)}")
            u.status = "invalid"
        u.payload = {k: v.get(k) for k in present}
    return units


def _per_row(ctx: _Context, units: list[Unit], effect: Callable[[Unit], str], *,
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


def _run_counts(ctx: _Context, units: list[Unit], *, apply: bool, batch_id: int | None,
                events: Sequence[Event]) -> None:
    user = ctx.settings.user

    def effect(u: Unit) -> str:
        v = u.payload
        moves = ledger.count(ctx.session, v["part"], v["counted"], location=v["location"],
                             ts=noon(v["date"]).replace(minute=30), user=user,
                             reference="COUNT", batch_id=batch_id)
        return "variances" if moves else "agreed"

    ctx.report.effects = _per_row(ctx, units, effect, order_by_day=True)


def _run_receipts(ctx: _Context, units: list[Unit], *, apply: bool, batch_id: int | None,
                  events: Sequence[Event]) -> None:
    user = ctx.settings.user

    def effect(u: Unit) -> str:
        v = u.payload
        ledger.receive(ctx.session, v["part"], v["qty"], v.get("unit_cost"), lot=v.get("lot"),
                       cured=v.get("cured"), location=v["location"], received=v["date"],
                       ts=noon(v["date"]).replace(hour=9), reference=v.get("order_ref"),
                       supplier=v.get("supplier"), user=user, batch_id=batch_id)
        return "receipts"

    ctx.report.effects = _per_row(ctx, units, effect, order_by_day=True)


def _run_catalog(ctx: _Context, units: list[Unit], *, apply: bool, batch_id: int | None,
                 events: Sequence[Event]) -> None:
    def effect(u: Unit) -> str:
        return update_part(ctx.session, u.payload)

    ctx.report.effects = _per_row(ctx, units, effect, order_by_day=False)


PART_FIELDS = ("kind", "description", "id_mm", "od_mm", "height_mm", "cs_mm", "material",
               "hardness", "volume_cm3", "unit", "standard", "notes")


def update_part(session: Session, values: dict[str, Any]) -> str:
    """Create a part or change the fields given (blank cells leave a field as it is).
    Returns ``created``, ``updated`` or ``unchanged``."""
    code = values["code"]
    part = session.exec(select(Part).where(Part.code == code)).first() or session.exec(
        select(Part).where(Part.code == code.upper())).first()
    given = {k: v for k, v in values.items() if k in PART_FIELDS and v is not None}
    if part is None:
        part = Part(code=code, kind=str(given.pop("kind")), **{
            k: (str(v) if k == "unit" else v) for k, v in given.items()})
        session.add(part)
        session.flush()
        return "created"
    changed = False
    for k, v in given.items():
        v = str(v) if k in ("kind", "unit") else v
        if getattr(part, k) != v:
            setattr(part, k, v)
            changed = True
    if changed:
        session.add(part)
        session.flush()
        return "updated"
    return "unchanged"


_BUILD: dict[str, Callable[[_Context, TypedRows], list[Unit]]] = {
    "history": _build_history, "counts": _build_counts, "receipts": _build_receipts,
    "catalog": _build_catalog}
_RUN = {"history": _run_history, "counts": _run_counts, "receipts": _run_receipts,
        "catalog": _run_catalog}


def settings_for(kind: str, **kw: Any) -> ImportSettings:
    """Settings with defaults, for callers that know only a few options."""
    return replace(ImportSettings(kind=kind), **kw)
