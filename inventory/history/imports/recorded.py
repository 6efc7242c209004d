"""History jobs whose reference is already recorded (by an earlier import of another file,
``inventory job add`` or the demo). The same job counts as already applied; a job that
differs is a conflict reported at the cells that differ, never dropped in silence:

- another day, service level or fork family: at the job cell;
- other lines: a quantity at its qty cell, a part or kit the record does not hold at its
  item (or kit) cell, a recorded part the file does not list at the job's first item cell.

A voided job with the file's day, service level and fork family counts as applied whatever
its lines (the void took them off): the file does not bring it back.

Lines are compared as the parts that left the shelf: a kit booked whole and a kit booked
as its bill of materials (it was not on hand) are the same line.
"""

from __future__ import annotations

from sqlmodel import select

from inventory.core.model import PartKind
from inventory.core.tables import ForkFamily, JobLine, Part, ServiceJob
from inventory.history.bulk_jobs import existing_refs
from inventory.history.imports.report import Unit
from inventory.history.imports.steps import Context

HINT = ("a job is imported once: give a corrected job a new reference, or correct stock "
        "with a stock adjustment")
CHUNK = 500


def mark_recorded(ctx: Context, units: list[Unit]) -> None:
    """Mark units whose job is recorded as ``applied`` (the same job) or ``invalid`` with a
    conflict at each cell that differs."""
    refs = [u.payload.ref for u in units if u.status in ("new", "review") and u.payload]
    taken = existing_refs(ctx.session, refs)
    if not taken:
        return
    recorded: dict[str, tuple] = {}
    lines: dict[str, dict[str, int]] = {}
    chunk = sorted(taken)
    for i in range(0, len(chunk), CHUNK):
        part = chunk[i:i + CHUNK]
        for ref, day, code, service, voided in ctx.session.exec(
                select(ServiceJob.ref, ServiceJob.day, ForkFamily.code, ServiceJob.service_level,
                       ServiceJob.voided_at)
                .join(ForkFamily, ForkFamily.id == ServiceJob.fork_family_id)
                .where(ServiceJob.ref.in_(part))):
            recorded[ref] = (day, code, service, voided)
        for ref, code, qty in ctx.session.exec(
                select(ServiceJob.ref, Part.code, JobLine.qty)
                .join(JobLine, JobLine.job_id == ServiceJob.id)
                .join(Part, Part.id == JobLine.part_id)
                .where(ServiceJob.ref.in_(part))):
            got = lines.setdefault(ref, {})
            got[code] = got.get(code, 0) + qty
    for u in units:
        if u.status not in ("new", "review") or not u.payload or u.payload.ref not in taken:
            continue
        day, code, service, voided = recorded[u.payload.ref]
        spec = u.payload
        if not (spec.day == day and str(spec.service) == service and spec.fork in ("", code)):
            u.status = "invalid"
            ctx.problem(u.rows[0].row, "job", f"job {spec.ref} is already recorded as "
                        f"{day.isoformat()} {code} {service}", kind="conflict", hint=HINT)
            continue
        held = lines.get(spec.ref, {})
        if voided is not None or _shelf(ctx, held) == _shelf(ctx, _file_lines(u)):
            # a voided job is the file's job, voided since: its lines went with the void
            u.status = "applied"
            continue
        u.status = "invalid"
        _report_lines(ctx, u, held)


def _file_lines(u: Unit) -> dict[str, int]:
    out: dict[str, int] = {}
    for item in u.payload.items:
        out[item.code] = out.get(item.code, 0) + item.qty
    return out


def _shelf(ctx: Context, lines: dict[str, int]) -> dict[int, int]:
    """Part id -> quantity off the shelf, kits taken as their bills of materials."""
    out: dict[int, int] = {}
    for code, qty in lines.items():
        part = ctx.index.part(code)
        if part is None:
            continue
        bom = ctx.index.bom.get(part.id) if part.kind == PartKind.KIT else None
        for pid, q in bom or [(part.id, 1)]:
            out[pid] = out.get(pid, 0) + q * qty
    return out


def _report_lines(ctx: Context, u: Unit, held: dict[str, int]) -> None:
    """One conflict per line that differs, at its cell."""
    ref = u.payload.ref
    item_col = "item" if "item" in ctx.hmap.matches else "kit"
    qty_col = "qty" if "qty" in ctx.hmap.matches else item_col
    first: dict[str, tuple[int, str]] = {}  # code -> (row, column of the code)
    for r in u.rows:
        v = r.values
        for name in ("item", "kit"):
            code = v.get(name)
            part = ctx.index.part(code) if code else None
            if part is not None:
                first.setdefault(part.code, (r.row, name))
    given = _file_lines(u)
    found = False
    for code, n in given.items():
        row, col = first.get(code, (u.rows[0].row, item_col))
        if code not in held:
            ctx.problem(row, col, f"job {ref} is already recorded without {code} (the file "
                        f"says {n})", kind="conflict", hint=HINT)
            found = True
        elif held[code] != n:
            ctx.problem(row, qty_col if col == "item" else col,
                        f"job {ref} is already recorded with {held[code]} x {code}, the file "
                        f"says {n}", kind="conflict", hint=HINT)
            found = True
    for code, n in held.items():
        if code not in given:
            ctx.problem(u.rows[0].row, item_col, f"job {ref} is already recorded with {n} x "
                        f"{code}, which the file does not list", kind="conflict", hint=HINT)
            found = True
    if not found:  # same codes, other bills of materials: say so once
        ctx.problem(u.rows[0].row, item_col, f"job {ref} is already recorded with other "
                    "lines", kind="conflict", hint=HINT)
