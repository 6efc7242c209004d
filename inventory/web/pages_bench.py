"""The bench: search by caliper readings, one part's fits and stock, "use on job".
"""

from __future__ import annotations

from datetime import date

from starlette.requests import Request
from starlette.responses import RedirectResponse, Response

from inventory.core.errors import InventoryError
from inventory.web import auth
from inventory.web.forms import (
    SERVICE_LEVELS,
    FormError,
    blank,
    field_of,
    fork_and_level,
    int_field,
    message_of,
    text_field,
)
from inventory.web.responses import page
from inventory.web.state import Web

BENCH_FIELDS = {"--id": "id", "--od": "od", "--height": "height", "--cs": "cs",
                "--tol": "tol", "--kind": "kind", "unknown seal kind": "kind",
                "--fork": "fork", "--seat": "seat", "--material": "material",
                "unknown material": "material", "give at least one dimension": "id",
                "--unit": "unit", "unknown fork": "fork", "unknown seat": "seat"}


def bench_choices(s) -> dict:
    from inventory.bench.service import NOT_BENCH_KINDS
    from inventory.core.convert import all_seats
    from inventory.core.model import PartKind

    seats: dict[str, list[str]] = {}
    for seat in all_seats(s):
        seats.setdefault(seat.fork, []).append(seat.seat)
    return {"kinds": [k.value for k in PartKind if k not in NOT_BENCH_KINDS],
            "forks": sorted(seats), "seats": seats,
            "all_seats": sorted({x for v in seats.values() for x in v})}


def run_match(web: Web, s, q) -> dict:
    from inventory.bench import service as bench

    unit = (q.get("unit") or "mm").strip().lower()
    if unit not in ("mm", "in"):
        raise InventoryError(f"--unit must be mm or in, got {unit!r}")
    limit = q.get("limit")
    try:
        limit_n = int(limit) if limit not in (None, "") else None
    except ValueError:
        raise InventoryError(f"--limit must be a whole number, got {limit!r}") from None
    req = bench.match_request(s, bench.MatchForm(
        kind=blank(q.get("kind")), id_=blank(q.get("id")), od=blank(q.get("od")),
        height=blank(q.get("height")), cs=blank(q.get("cs")), tol=blank(q.get("tol")),
        material=blank(q.get("material")), fork=blank(q.get("fork")),
        seat=blank(q.get("seat")), limit=limit_n,
        standard=str(q.get("no_standard", "")).lower() not in ("1", "true", "on", "yes"),
        unit=unit))
    return web.shop_cache.match(s, req).to_dict()


async def bench_page(request: Request) -> Response:
    who = auth.require(request, "bench")
    web: Web = request.app.state.web
    q = dict(request.query_params)
    if q.get("code"):  # a scanner types a part code and Enter: open that part
        from urllib.parse import quote

        return RedirectResponse(f"/bench/part/{quote(q['code'].strip(), safe='')}", 303)
    searched = any(q.get(k) for k in ("id", "od", "height", "cs", "seat"))

    def go(s):
        choices = bench_choices(s)
        if not searched:
            return choices, None, {}
        try:
            return choices, run_match(web, s, q), {}
        except InventoryError as exc:
            return choices, None, {field_of(exc, "id", BENCH_FIELDS): message_of(exc)}
    choices, result, errors = await web.read(go, who)
    from inventory.bench.service import CAUTION

    return page(request, "bench.html", who, status=400 if errors else 200, values=q,
                errors=errors, result=result, caution=CAUTION, levels=SERVICE_LEVELS,
                booked=request.query_params.get("booked"), **choices)


async def part_page(request: Request) -> Response:
    who = auth.require(request, "bench")
    return await _part_view(request, who, request.path_params["code"])


async def _part_view(request: Request, who: dict, code: str, errors: dict | None = None,
                     values: dict | None = None, status: int = 200) -> Response:
    web: Web = request.app.state.web

    def go(s):
        from inventory.bench import service as bench
        from inventory.core.convert import all_seats

        try:
            spec = bench.resolve_part(s, code)
        except InventoryError as exc:
            return None, None, None, message_of(exc), bench_choices(s)
        fits = bench.fit_everywhere(spec, all_seats(s), include_fail=False)
        stock = web.shop_cache.shop(s).stock_of(spec.code)
        return spec, fits, stock, None, bench_choices(s)
    spec, fits, stock, error, choices = await web.read(go, who)
    from inventory.bench.service import CAUTION

    if spec is None:
        return page(request, "bench.html", who, status=404, values={"code": code},
                    errors={"code": error}, result=None, caution=CAUTION,
                    levels=SERVICE_LEVELS, **choices)
    return page(request, "part.html", who, status=status, spec=spec, fits=fits, stock=stock,
                caution=CAUTION, levels=SERVICE_LEVELS, errors=errors or {},
                values=values or {}, **choices)


async def bench_use(request: Request) -> Response:
    """"Use on job": book the part to a new job in one step."""
    who = auth.require(request, "jobs")
    web: Web = request.app.state.web
    form = await request.form()
    auth.check_csrf(request, form)
    part = text_field(form, "part") or ""
    back = str(form.get("back") or "/bench")
    if not back.startswith("/bench"):
        back = "/bench"

    def go(s):
        from inventory.history.service import JobEntry, add_job

        qty = int_field(form, "qty", minimum=1)
        fork, level = fork_and_level(form, fork_hint="pick the fork family the part goes in")
        today = date.today()
        row, _ = add_job(s, JobEntry(fork, today, level, ((part, qty),),
                                     ref=text_field(form, "job")))
        return row.ref
    try:
        ref = await web.write(go, who)
    except FormError as exc:
        return await _bench_again(request, who, form, {f"use-{exc.field}": exc.message})
    except InventoryError as exc:
        return await _bench_again(request, who, form, {
            "use-" + field_of(exc, "qty", {"fork": "fork", "job": "job", "qty": "qty"}):
            message_of(exc)})
    sep = "&" if "?" in back else "?"
    from urllib.parse import quote

    return RedirectResponse(f"{back}{sep}booked={quote(f'{ref} {part}', safe='')}", 303)


async def _bench_again(request: Request, who: dict, form, errors: dict) -> Response:
    """The bench (or part) page again with a booking error beside the field, status 400."""
    web: Web = request.app.state.web
    back = str(form.get("back") or "/bench")
    if back.startswith("/bench/part/"):  # booked from the part's page: back there
        return await _part_view(request, who, back[len("/bench/part/"):].split("?")[0],
                                errors, {"use-fork": form.get("fork"),
                                         "use-service": form.get("service"),
                                         "use-qty": form.get("qty")}, 400)
    from urllib.parse import parse_qsl, urlsplit

    parts = urlsplit(back)
    q = dict(parse_qsl(parts.query))
    from inventory.bench.service import CAUTION

    def go(s):
        choices = bench_choices(s)
        result = None
        if any(q.get(k) for k in ("id", "od", "height", "cs", "seat")):
            try:
                result = run_match(web, s, q)
            except InventoryError:
                result = None
        return choices, result
    choices, result = await web.read(go, who)
    return page(request, "bench.html", who, status=400, values=q | {"use_part":
                form.get("part"), "use_qty": form.get("qty"), "use_fork": form.get("fork"),
                "use_service": form.get("service")}, errors=errors, result=result,
                caution=CAUTION, levels=SERVICE_LEVELS, **choices)
