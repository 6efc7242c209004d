"""Jobs: the recent list, a new job, one job's movements, returning parts or voiding it.
"""

from __future__ import annotations

from datetime import date

from starlette.exceptions import HTTPException
from starlette.requests import Request
from starlette.responses import RedirectResponse, Response

from inventory.core.errors import InventoryError
from inventory.web import auth
from inventory.web.forms import (
    SERVICE_LEVELS,
    FormError,
    day_field,
    field_of,
    fork_and_level,
    int_field,
    message_of,
    text_field,
)
from inventory.web.pages_bench import bench_choices
from inventory.web.responses import page
from inventory.web.state import Web


async def jobs_page(request: Request, errors: dict | None = None, values: dict | None = None,
                    status: int = 200) -> Response:
    who = auth.require(request, "jobs")
    web: Web = request.app.state.web

    def go(s):
        from inventory.history.service import list_jobs

        return list_jobs(s, limit=50), bench_choices(s)["forks"]
    jobs, forks = await web.read(go, who)
    return page(request, "jobs.html", who, status=status, jobs=jobs, forks=forks,
                levels=SERVICE_LEVELS, errors=errors or {}, values=values or {},
                done=request.query_params.get("done"))


def _job_items(form) -> tuple[tuple[str, int], ...]:
    """(part or kit code, quantity) of a new job: the kits typed, then the part lines."""
    items = []
    for kit in str(form.get("kits") or "").replace(",", " ").split():
        items.append((kit.strip(), 1))
    for i in range(1, 6):
        code = text_field(form, f"part{i}")
        if code:
            items.append((code, int_field(form, f"qty{i}", minimum=1)))
    if not items:
        raise FormError("part1", "a job needs at least one kit or part")
    return tuple(items)


async def jobs_add(request: Request) -> Response:
    who = auth.require(request, "jobs")
    web: Web = request.app.state.web
    form = await request.form()
    auth.check_csrf(request, form)

    def go(s):
        from inventory.history.service import JobEntry, add_job

        fork, level = fork_and_level(form)
        day = day_field(text_field(form, "date"), "date", booking=True) or date.today()
        if day > date.today():
            raise FormError("date", f"{day.isoformat()} is in the future")
        items = _job_items(form)
        hours = int_field(form, "hours", minimum=0) if text_field(form, "hours") else None
        row, _ = add_job(s, JobEntry(fork, day, level, items, hours=hours))
        return row.ref
    values = {k: v for k, v in form.items() if k != "csrf"}
    try:
        ref = await web.write(go, who)
    except FormError as exc:
        return await jobs_page(request, {exc.field: exc.message}, values, 400)
    except InventoryError as exc:
        return await jobs_page(request, {field_of(exc, "part1", {"fork": "fork",
                                                                 "part": "part1"}):
                                         message_of(exc)}, values, 400)
    from urllib.parse import quote

    return RedirectResponse(f"/jobs/{quote(ref, safe='')}", 303)


async def job_add_part(request: Request) -> Response:
    """Take one more part (or kit) from stock for an existing job: booked now with the
    job's reference and added to its lines, through the history service."""
    who = auth.require(request, "jobs")
    web: Web = request.app.state.web
    ref = request.path_params["ref"]
    form = await request.form()
    auth.check_csrf(request, form)

    def go(s):
        from inventory.history.service import add_to_job

        part = text_field(form, "part")
        if not part:
            raise FormError("add-part", "give the part or kit code")
        qty = int_field(form, "qty", minimum=1)
        return f"took {add_to_job(s, ref, part, qty)} x {part} for this job"
    values = {"add-part": form.get("part"), "add-qty": form.get("qty")}
    try:
        done = await web.write(go, who)
    except FormError as exc:
        key = exc.field if exc.field.startswith("add-") else f"add-{exc.field}"
        return await job_page(request, {key: exc.message}, 400, values)
    except InventoryError as exc:
        field = "add-" + field_of(exc, "part", {"part": "part", "qty": "qty"})
        return await job_page(request, {field: message_of(exc)}, 400, values)
    from urllib.parse import quote

    return RedirectResponse(f"/jobs/{quote(ref, safe='')}?done={quote(done)}", 303)


async def job_undo(request: Request) -> Response:
    """Return unused parts from a job, or void the job: new movements, nothing edited."""
    who = auth.require(request, "jobs")
    web: Web = request.app.state.web
    ref, what = request.path_params["ref"], request.path_params["what"]
    if what not in ("return", "void"):
        raise HTTPException(404)
    form = await request.form()
    auth.check_csrf(request, form)

    def go(s):
        from inventory.stock import service as stock

        if what == "return":
            part = text_field(form, "part")
            if not part:
                raise FormError("return-part", "pick the part that came back")
            got = stock.return_from_job(s, ref, part, int_field(form, "qty", minimum=1))
            return f"returned {sum(m.qty for m in got.movements)} x {part} to stock"
        reason = text_field(form, "reason")
        if not reason:
            raise FormError("void-reason", "voiding a job needs a reason")
        got = stock.void_job(s, ref, reason=reason)
        return f"voided: {sum(m.qty for m in got.movements)} unit(s) back in stock"
    try:
        done = await web.write(go, who)
    except FormError as exc:
        return await job_page(request, {exc.field: exc.message}, 400)
    except InventoryError as exc:
        field = "return-qty" if what == "return" else "void-reason"
        return await job_page(request, {field: message_of(exc)}, 400)
    from urllib.parse import quote

    return RedirectResponse(f"/jobs/{quote(ref, safe='')}?done={quote(done)}", 303)


async def job_page(request: Request, errors: dict | None = None,
                   status: int = 200, values: dict | None = None) -> Response:
    who = auth.require(request, "jobs")
    web: Web = request.app.state.web
    ref = request.path_params["ref"]

    def go(s):
        from inventory.history.service import job_detail

        try:
            return job_detail(s, ref)
        except InventoryError:
            return None
    found = await web.read(go, who)
    if found is None:
        raise HTTPException(404)
    row, moves = found
    return page(request, "job.html", who, status=status, job=row, moves=moves,
                errors=errors or {}, values=values or {},
                done=request.query_params.get("done"))
