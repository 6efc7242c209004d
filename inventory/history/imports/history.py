"""``inventory import history``: service jobs, one or more rows per job (grouped by the job
reference), with the parts or kits each used. Jobs are replayed in date order through the
job writer, taking stock as the ledger would (or recording the jobs only, ``stock=False``),
with the caller's events (deliveries, counts) run on their days in between."""

from __future__ import annotations

from datetime import date
from operator import itemgetter
from typing import Any

from inventory.core.errors import InventoryError, Problem, Source
from inventory.core.model import PartKind
from inventory.history.bulk_jobs import JobWriter, StockBook
from inventory.history.imports.forks import remember_aliases, resolve_forks
from inventory.history.imports.keys import occurrence_keys
from inventory.history.imports.report import Event, Unit
from inventory.history.imports.steps import Context, suggest_hint
from inventory.history.jobs import JobItem, JobSpec, fork_key
from inventory.sheets.kinds import CODE_HINT
from inventory.sheets.rows import TypedRow, TypedRows
from inventory.stock.timeline import ledger_start

JOB_FIELDS = ("date", "fork", "service", "hours", "fork_ref")  # the same on every line


def _group_jobs(ctx: Context, typed: TypedRows) -> dict[str, list[TypedRow]]:
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


def _consistent(ctx: Context, ref: str, rows: list[TypedRow]) -> bool:
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


def _job_items(ctx: Context, rows: list[TypedRow], unknown: dict[str, str | None]
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
                    unknown[code] = suggest_hint(code, list(ctx.index.parts))
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


def build(ctx: Context, typed: TypedRows) -> list[Unit]:
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
    for u, k in zip(units, occurrence_keys("history", contents), strict=True):
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


def run(ctx: Context, units: list[Unit]) -> None:
    session, rep = ctx.session, ctx.report
    apply, batch_id, events = ctx.apply, ctx.batch_id, ctx.events
    pending = [u for u in units if u.status in ("new", "review") and u.payload is not None]
    if apply:
        remember_aliases(ctx)
    book = StockBook(session, write=apply, user=ctx.settings.user) if ctx.settings.stock else None
    writer = JobWriter(session, ctx.index, book, batch_id=batch_id)
    # Jobs dated before the ledger's first movement record usage only: the shelf they
    # emptied is not today's shelf (unless the import is told to take stock for them).
    start = None
    if book is not None and not ctx.settings.stock_before_ledger:
        start = ledger_start(session) or min((ev.day for ev in events), default=date.max)
    usage_only = JobWriter(session, ctx.index, None, batch_id=batch_id)
    early = 0
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
            if start is not None and u.day < start:
                usage_only.add(u.payload)
                early += 1
            else:
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
        rep.effects["jobs taking stock"] = jobs - early
        rep.effects["jobs recording usage only"] = early
    if early:
        since = f"first movement {start.isoformat()}" if start != date.max else "no movements yet"
        rep.warnings.append(Problem(
            f"{early} of {jobs} job(s) are dated before the ledger starts ({since}): they record "
            f"their usage without taking stock; {jobs - early} take stock "
            "(--stock-before-ledger takes stock for all)", kind="info", severity="warning"))
    if apply and not rep.problems:
        writer.finish()
        usage_only.finish()
