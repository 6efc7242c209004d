"""The ASGI app: pages for the bench, stock, jobs, imports, plan and month end, and a JSON
API under ``/api/``. A face: every answer comes from the feature services (the same ones the
command line calls); this module parses the form, calls one service in one transaction as
the person signed in, and renders.

``create_app(url)`` builds it; ``inventory serve`` runs it under uvicorn.
"""

from __future__ import annotations

import json
import os
from collections.abc import Callable
from datetime import date, datetime
from decimal import Decimal
from pathlib import Path
from typing import Any

from starlette.applications import Starlette
from starlette.concurrency import run_in_threadpool
from starlette.exceptions import HTTPException
from starlette.middleware import Middleware
from starlette.middleware.gzip import GZipMiddleware
from starlette.middleware.sessions import SessionMiddleware
from starlette.requests import Request
from starlette.responses import HTMLResponse, JSONResponse, RedirectResponse, Response
from starlette.routing import Mount, Route
from starlette.staticfiles import StaticFiles
from starlette.templating import Jinja2Templates

from inventory.core import parse
from inventory.core.actor import acting_as
from inventory.core.db import make_engine, resolve_url, transaction
from inventory.core.errors import InventoryError
from inventory.web import auth

HERE = Path(__file__).parent
templates = Jinja2Templates(directory=str(HERE / "templates"))


def _size(row: dict, unit: str = "mm") -> str:
    """``24.99 x 3.53`` for a ring (inside x section), ``31.20/42.10/10.50`` otherwise."""
    from inventory.core.units import format_length

    def f(v):
        return "-" if v is None else format_length(v, unit, with_unit=False)
    if row.get("cs_mm") is not None and row.get("kind") in ("o_ring", "x_ring"):
        return f"{f(row.get('id_mm'))} x {f(row['cs_mm'])}"
    return "/".join(f(row.get(k)) for k in ("id_mm", "od_mm", "height_mm"))


def _num(v, unit: str = "") -> str:
    import math

    if v is None or (isinstance(v, float) and math.isnan(v)):
        return "-"
    if isinstance(v, float):
        text = "inf" if math.isinf(v) else (f"{v:.3f}" if unit == "mm" else f"{v:.2f}")
        return f"{text} {unit}".strip()
    return f"{v} {unit}".strip()


templates.env.filters["size"] = _size
templates.env.filters["num"] = _num

NAV = [("bench", "/bench", "Bench", "bench"), ("stock", "/stock", "Stock", "stock_view"),
       ("jobs", "/jobs", "Jobs", "jobs"), ("imports", "/imports", "Imports", "imports"),
       ("plan", "/plan", "Plan", "plan"), ("month-end", "/month-end", "Month end", "month_end")]
SERVICE_LEVELS = ("lower_leg", "air_spring", "damper")


# --------------------------------------------------------------------------- plumbing

def _json_default(o: Any) -> Any:
    if isinstance(o, Decimal):
        return str(o)
    if isinstance(o, (date, datetime)):
        return o.isoformat()
    if hasattr(o, "to_dict"):
        return o.to_dict()
    raise TypeError(f"not JSON: {type(o).__name__}")


def json_response(data: Any, status: int = 200) -> Response:
    return Response(json.dumps(data, default=_json_default, ensure_ascii=False), status,
                    media_type="application/json")


class FormError(Exception):
    """Bad input for one field of a form: shown beside that field."""

    def __init__(self, field: str, message: str) -> None:
        super().__init__(message)
        self.field, self.message = field, message


def field_of(exc: InventoryError, default: str, fields: dict[str, str] | None = None) -> str:
    """Which form field an error is about: the option its message names (``--cs: ...``),
    else a word of it (``part``, ``quantity``...), else ``default``."""
    text = str(exc.lines()[0] if exc.lines() else exc).lower()
    for opt, name in (fields or {}).items():
        if text.startswith(opt) or f"{opt}:" in text or f"{opt} " in text:
            return name
    if exc.problems and exc.problems[0].kind == "shortage":
        return "qty" if "qty" in (fields or {}).values() or default == "qty" else default
    for word, name in (("unknown part", "part"), ("unknown location", "location"),
                       ("unknown fork", "fork"), ("quantity", "qty"), ("not enough", "qty"),
                       ("short", "qty"), ("reason", "reason"), ("cost", "cost")):
        if word in text and name in (fields or {}).values():
            return name
    return default


def message_of(exc: InventoryError) -> str:
    lines = exc.lines()
    text = lines[0] if lines else str(exc)
    if exc.hint and len(exc.problems) <= 1:
        text = f"{text} ({exc.hint})"
    return text


def workbook_download(data: bytes, filename: str) -> Response:
    """A workbook sent as a download, its file name reduced to safe characters."""
    safe = "".join(ch if ch.isalnum() or ch in "-_." else "_" for ch in filename)
    return Response(data, media_type="application/vnd.openxmlformats-officedocument."
                    "spreadsheetml.sheet",
                    headers={"content-disposition": f'attachment; filename="{safe}"'})


def _int(form, name: str, *, minimum: int | None = None, signed: bool = False) -> int:
    """A whole number from a form, read by the one quantity parser (the CLI's and the
    imports' bounds: ASCII digits, at most a million in one booking)."""
    raw = str(form.get(name, "")).strip()
    if not raw:
        raise FormError(name, "a whole number is needed here")
    try:
        return parse.quantity(raw, signed=signed, zero=minimum == 0 and not signed)
    except ValueError as exc:
        raise FormError(name, str(exc)) from None


def _money(form, name: str) -> Decimal | None:
    """A unit cost from a form, read by the one money parser (finite, four places, the
    column's limit and the unit-cost ceiling)."""
    raw = str(form.get(name, "")).strip()
    if not raw:
        return None
    try:
        return parse.unit_cost(raw, confirm_hint="a manager books it from the command line "
                                                 "with --cost-ok")
    except ValueError as exc:
        raise FormError(name, str(exc)) from None


def _text(form, name: str) -> str | None:
    """A code or short text from a form: no control or bidirectional characters, capped at
    its column's length (the one code parser, as on the command line)."""
    raw = str(form.get(name, "") or "").strip()
    if not raw:
        return None
    base = name.split("-")[-1].rstrip("0123456789") if "-" in name else name.rstrip("0123456789")
    try:
        return parse.code(raw, what=base if base in parse.MAX_LEN else "code")
    except ValueError as exc:
        raise FormError(name, str(exc)) from None


def _day(raw: str | None, name: str, *, booking: bool = False) -> date | None:
    """A date from a form through the one date parser; a booking date also within the
    ledger's bounds (not before 2000, not past tomorrow)."""
    if not raw:
        return None
    try:
        return parse.booking_day(raw, what=name) if booking else parse.day(raw, what=name)
    except ValueError as exc:
        raise FormError(name, str(exc)) from None


class Web:
    """What the handlers share: the engine, the bench's in-memory catalog."""

    def __init__(self, url: str | None) -> None:
        from inventory.bench.service import ShopCache

        self.url = resolve_url(url)
        self.engine = make_engine(self.url)
        self.shop_cache = ShopCache()

    async def read(self, fn: Callable, who: dict | None = None):
        """``fn(session)`` in a worker thread, in one transaction, as the person signed in
        (the ledger records their name on every movement)."""
        def go():
            with acting_as(who["name"] if who else None), transaction(self.engine) as s:
                return fn(s)
        return await run_in_threadpool(go)

    async def write(self, fn: Callable, who: dict | None = None, *, attempts: int = 3):
        """Like :meth:`read`; a transaction that lost a race on a unique key (two people
        taking the same new job number at once) or a lock (deadlock, serialization) is
        rolled back whole and run again, so the second person gets the real answer (for
        example "not enough stock") rather than a server error."""
        from sqlalchemy.exc import IntegrityError, OperationalError

        for attempt in range(attempts):
            try:
                return await self.read(fn, who)
            except (IntegrityError, OperationalError):
                if attempt == attempts - 1:
                    raise


def page(request: Request, name: str, who: dict | None, status: int = 200,
         **ctx) -> HTMLResponse:
    nav = [(key, href, label) for key, href, label, right in NAV
           if who and right in auth.RIGHTS.get(who["role"], frozenset())]
    return templates.TemplateResponse(request, name, {
        "who": who, "nav": nav, "csrf": auth.csrf_token(request) if who else "",
        "errors": ctx.pop("errors", {}), "values": ctx.pop("values", {}), **ctx},
        status_code=status)


# ------------------------------------------------------------------------------ pages

async def home(request: Request) -> Response:
    who = auth.person(request)
    if who is None:
        return RedirectResponse("/login", 303)
    return RedirectResponse("/bench", 303)


async def login_form(request: Request) -> Response:
    expired = request.query_params.get("expired") == "1"
    return page(request, "login.html", None, message="Your session ended: please sign in again."
                if expired else None, next=request.query_params.get("next", "/bench"),
                csrf=auth.csrf_token(request))


async def login(request: Request) -> Response:
    from inventory.people.service import SignInRefused, authenticate

    web: Web = request.app.state.web
    form = await request.form()
    try:
        auth.check_csrf(request, form)
    except auth.CsrfRefused:
        return page(request, "login.html", None, status=400, csrf=auth.csrf_token(request),
                    errors={"name": "the sign-in form was stale: please try again"})
    name, password = _text(form, "name") or "", str(form.get("password") or "")

    def go(s):
        try:
            return authenticate(s, name, password), None
        except SignInRefused as exc:
            return None, message_of(exc)
    who, error = await web.write(go)
    if who is None:
        return page(request, "login.html", None, status=401, csrf=auth.csrf_token(request),
                    errors={"password": error}, values={"name": name},
                    next=form.get("next", "/bench"))
    auth.sign_in(request, who.name, who.role)
    target = str(form.get("next") or "/bench")
    if not target.startswith("/") or target.startswith("//"):
        target = "/bench"
    return RedirectResponse(target, 303)


async def logout(request: Request) -> Response:
    form = await request.form()
    auth.check_csrf(request, form)
    request.session.clear()
    return RedirectResponse("/login", 303)


# -- bench

BENCH_FIELDS = {"--id": "id", "--od": "od", "--height": "height", "--cs": "cs",
                "--tol": "tol", "--kind": "kind", "unknown seal kind": "kind",
                "--fork": "fork", "--seat": "seat", "--material": "material",
                "unknown material": "material", "give at least one dimension": "id",
                "--unit": "unit", "unknown fork": "fork", "unknown seat": "seat"}


def _bench_choices(s) -> dict:
    from inventory.bench.service import NOT_BENCH_KINDS
    from inventory.core.convert import all_seats
    from inventory.core.model import PartKind

    seats: dict[str, list[str]] = {}
    for seat in all_seats(s):
        seats.setdefault(seat.fork, []).append(seat.seat)
    return {"kinds": [k.value for k in PartKind if k not in NOT_BENCH_KINDS],
            "forks": sorted(seats), "seats": seats,
            "all_seats": sorted({x for v in seats.values() for x in v})}


def _match(web: Web, s, q) -> dict:
    from inventory.bench import service as bench

    unit = (q.get("unit") or "mm").strip().lower()
    if unit not in ("mm", "in"):
        raise InventoryError(f"--unit must be mm or in, got {unit!r}")
    limit = q.get("limit")
    try:
        limit_n = int(limit) if limit not in (None, "") else None
    except ValueError:
        raise InventoryError(f"--limit must be a whole number, got {limit!r}") from None
    req = bench.match_request(
        s, kind=_blank(q.get("kind")), id_=_blank(q.get("id")), od=_blank(q.get("od")),
        height=_blank(q.get("height")), cs=_blank(q.get("cs")), tol=_blank(q.get("tol")),
        material=_blank(q.get("material")), fork=_blank(q.get("fork")),
        seat=_blank(q.get("seat")), limit=limit_n,
        standard=str(q.get("no_standard", "")).lower() not in ("1", "true", "on", "yes"),
        unit=unit)
    return web.shop_cache.match(s, req).to_dict()


def _blank(v):
    v = None if v is None else str(v).strip()
    return v or None


async def bench_page(request: Request) -> Response:
    who = auth.require(request, "bench")
    web: Web = request.app.state.web
    q = dict(request.query_params)
    if q.get("code"):  # a scanner types a part code and Enter: open that part
        return RedirectResponse(f"/bench/part/{q['code'].strip()}", 303)
    searched = any(q.get(k) for k in ("id", "od", "height", "cs", "seat"))

    def go(s):
        choices = _bench_choices(s)
        if not searched:
            return choices, None, {}
        try:
            return choices, _match(web, s, q), {}
        except InventoryError as exc:
            return choices, None, {field_of(exc, "id", BENCH_FIELDS): message_of(exc)}
    choices, result, errors = await web.read(go, who)
    from inventory.bench.fit import CAUTION

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
            return None, None, None, message_of(exc), _bench_choices(s)
        fits = bench.fit_everywhere(spec, all_seats(s), include_fail=False)
        stock = web.shop_cache.shop(s).stock_of(spec.code)
        return spec, fits, stock, None, _bench_choices(s)
    spec, fits, stock, error, choices = await web.read(go, who)
    from inventory.bench.fit import CAUTION

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
    part = _text(form, "part") or ""
    back = str(form.get("back") or "/bench")
    if not back.startswith("/bench"):
        back = "/bench"

    def go(s):
        from inventory.history.jobs import JobItem, record_job
        from inventory.history.service import new_job_ref

        qty = _int(form, "qty", minimum=1)
        fork = _text(form, "fork")
        if not fork:
            raise FormError("fork", "pick the fork family the part goes in")
        level = _text(form, "service") or ""
        if level not in SERVICE_LEVELS:
            raise FormError("service", f"pick a service level ({', '.join(SERVICE_LEVELS)})")
        today = date.today()
        ref = _text(form, "job") or new_job_ref(s, today)
        record_job(s, ref=ref, day=today, fork=fork, service=level,
                   items=[JobItem(part, qty)])
        return ref
    try:
        ref = await web.write(go, who)
    except FormError as exc:
        return await _bench_again(request, who, form, {f"use-{exc.field}": exc.message})
    except InventoryError as exc:
        return await _bench_again(request, who, form, {
            "use-" + field_of(exc, "qty", {"fork": "fork", "job": "job", "qty": "qty"}):
            message_of(exc)})
    sep = "&" if "?" in back else "?"
    return RedirectResponse(f"{back}{sep}booked={ref}%20{part}", 303)


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
    from inventory.bench.fit import CAUTION

    def go(s):
        choices = _bench_choices(s)
        result = None
        if any(q.get(k) for k in ("id", "od", "height", "cs", "seat")):
            try:
                result = _match(web, s, q)
            except InventoryError:
                result = None
        return choices, result
    choices, result = await web.read(go, who)
    return page(request, "bench.html", who, status=400, values=q | {"use_part":
                form.get("part"), "use_qty": form.get("qty"), "use_fork": form.get("fork"),
                "use_service": form.get("service")}, errors=errors, result=result,
                caution=CAUTION, levels=SERVICE_LEVELS, **choices)


# -- stock

STOCK_PAGE_LINES = 400


def stock_default_location(locations: list[str]) -> str:
    """The ledger's default location (MAIN) when the shop has it, so a count or receipt is
    not booked to whichever location sorts first."""
    from inventory.stock.service import DEFAULT_LOCATION

    return DEFAULT_LOCATION if DEFAULT_LOCATION in locations else (locations or [""])[0]
STOCK_ACTIONS = {"issue": "issue", "count": "count", "receive": "receive", "adjust": "adjust",
                 "move": "move"}


async def stock_page(request: Request, errors: dict | None = None, values: dict | None = None,
                     status: int = 200, done: str | None = None,
                     sheet: list | None = None) -> Response:
    who = auth.require(request, "stock_view")
    web: Web = request.app.state.web
    part = request.query_params.get("part") or None

    def go(s):
        from inventory.stock import service as stock

        try:
            lines = stock.on_hand(s, part=part, by_lot=True)
        except InventoryError as exc:
            return [], stock.locations(s), message_of(exc)
        return lines, stock.locations(s), None
    lines, locations, err = await web.read(go, who)
    total_lines = len(lines)
    lines = lines[:STOCK_PAGE_LINES]  # a page stays small on a tablet; filter by part for more

    def limits(s):
        from inventory.stock import service as stock

        return stock.storage_limits(s, lines)
    limits_ = await web.read(limits, who) if lines else []
    from inventory.bench.fit import CAUTION

    errs = dict(errors or {})
    if err:
        errs["filter"] = err
    return page(request, "stock.html", who, status=status if not err else 404, lines=lines,
                total_lines=total_lines, limits=limits_,
                locations=locations, errors=errs, part=part,
                values={f"{a}-location": stock_default_location(locations)
                        for a in ("count", "receive", "adjust", "new")} | (values or {}),
                done=done or request.query_params.get("done"),
                count_mode=sheet is not None or request.query_params.get("mode") == "count",
                sheet=sheet or [], caution=CAUTION,
                may=lambda r: auth.may(request, r))


async def count_sheet(request: Request) -> Response:
    """Count mode: walk the shelves adding counts to a sheet kept in the page itself (hidden
    fields, nothing written), then book every variance at the end in one transaction."""
    who = auth.require(request, "count")
    web: Web = request.app.state.web
    form = await request.form()
    auth.check_csrf(request, form)
    rows = []
    for i in range(int(form.get("n") or 0)):
        part, loc, qty = (_text(form, f"c{i}-part"), _text(form, f"c{i}-location"),
                          _text(form, f"c{i}-qty"))
        if part and loc and qty is not None and qty.isdigit():
            rows.append({"part": part, "location": loc, "qty": int(qty)})
    errors: dict[str, str] = {}
    values = {k: v for k, v in form.items() if k.startswith("new-")}
    if form.get("action") == "add":
        part = _text(form, "new-part")
        loc = _text(form, "new-location") or "MAIN"
        try:
            if not part:
                raise FormError("new-part", "give a part code")
            qty = _int(form, "new-qty", minimum=0)

            def check(s):
                from inventory.stock import service as stock

                return sum(ln.on_hand for ln in stock.on_hand(s, part=part, location=loc))
            ledger_qty = await web.read(check, who)
        except FormError as exc:
            errors[exc.field if exc.field.startswith("new-") else f"new-{exc.field}"] = \
                exc.message
        except InventoryError as exc:
            errors["new-part"] = message_of(exc)
        else:
            rows = [r for r in rows if (r["part"], r["location"]) != (part, loc)]
            rows.append({"part": part, "location": loc, "qty": qty, "ledger": ledger_qty})
            values = {"new-location": loc}
    elif form.get("action") == "book":
        def book(s):
            from inventory.stock import service as stock

            return [(r["part"], r["location"], stock.count(s, r["part"], r["qty"],
                                                           location=r["location"]))
                    for r in rows]
        try:
            booked = await web.write(book, who)
        except InventoryError as exc:
            errors["sheet"] = f"nothing booked: {message_of(exc)}"
        else:
            from urllib.parse import quote

            moved = sum(1 for _, _, v in booked if v)
            return RedirectResponse("/stock?mode=count&done=" + quote(
                f"{len(booked)} count(s) booked, {moved} with a variance"), 303)

    def ledger_of(s):
        from inventory.stock import service as stock

        return [sum(ln.on_hand for ln in stock.on_hand(s, part=r["part"],
                                                       location=r["location"]))
                for r in rows]
    for r, n in zip(rows, await web.read(ledger_of, who), strict=True):
        r["ledger"] = n
    return await stock_page(request, errors, values, 400 if errors else 200, sheet=rows)


async def stock_action(request: Request) -> Response:
    action = request.path_params["action"]
    if action not in STOCK_ACTIONS:
        raise HTTPException(404)
    who = auth.require(request, action)
    web: Web = request.app.state.web
    form = await request.form()
    auth.check_csrf(request, form)
    fields = {"part": "part", "qty": "qty", "location": "location", "reason": "reason",
              "cost": "cost", "order": "order", "--from": "from", "--to": "to"}

    def go(s):
        from inventory.stock import service as stock

        part = _text(form, "part")
        if not part:
            raise FormError("part", "give a part code")
        loc = _text(form, "location") or stock.DEFAULT_LOCATION
        if action == "issue":
            n = stock.issue(s, part, _int(form, "qty", minimum=1),
                            location=_text(form, "location"), reference=_text(form, "job"))
            return f"issued {n} x {part}"
        if action == "count":
            v = stock.count(s, part, _int(form, "qty", minimum=0), location=loc)
            return f"{part} at {loc}: count agrees" if v == 0 else \
                f"{part} at {loc}: variance {v:+d} booked"
        if action == "receive":
            qty = _int(form, "qty", minimum=1)
            cost, cured, order = _money(form, "cost"), _text(form, "cured"), _text(form, "order")
            if order:
                from inventory.ordering.service import receive_order

                return receive_order(s, order, part, qty, unit_cost=cost, cured=cured,
                                     location=loc)
            return stock.receive(s, part, qty, unit_cost=cost, cured=cured, location=loc)
        if action == "adjust":
            reason = _text(form, "reason")
            if not reason:
                raise FormError("reason", "an adjustment needs a reason")
            n = stock.adjust(s, part, _int(form, "qty", signed=True), reason=reason,
                             location=loc)
            return f"adjusted {part} by {n:+d}"
        src, dst = _text(form, "from"), _text(form, "to")
        if not src:
            raise FormError("from", "pick the location to take from")
        if not dst:
            raise FormError("to", "pick the location to put into")
        n = stock.move(s, part, _int(form, "qty", minimum=1), from_location=src,
                       to_location=dst)
        return f"moved {n} x {part} from {src} to {dst}"
    values = {f"{action}-{k}": v for k, v in form.items() if k != "csrf"}
    try:
        done = await web.write(go, who)
    except FormError as exc:
        return await stock_page(request, {f"{action}-{exc.field}": exc.message}, values, 400)
    except InventoryError as exc:
        return await stock_page(request, {f"{action}-{field_of(exc, 'part', fields)}":
                                          message_of(exc)}, values, 400)
    mode = "&mode=count" if action == "count" else ""
    from urllib.parse import quote

    return RedirectResponse(f"/stock?done={quote(done)}{mode}", 303)


# -- jobs

async def jobs_page(request: Request, errors: dict | None = None, values: dict | None = None,
                    status: int = 200) -> Response:
    who = auth.require(request, "jobs")
    web: Web = request.app.state.web

    def go(s):
        from inventory.history.jobs import list_jobs

        return list_jobs(s, limit=50), _bench_choices(s)["forks"]
    jobs, forks = await web.read(go, who)
    return page(request, "jobs.html", who, status=status, jobs=jobs, forks=forks,
                levels=SERVICE_LEVELS, errors=errors or {}, values=values or {},
                done=request.query_params.get("done"))


def _job_items(form) -> list:
    from inventory.history.jobs import JobItem

    items = []
    for kit in str(form.get("kits") or "").replace(",", " ").split():
        items.append(JobItem(kit.strip(), 1))
    for i in range(1, 6):
        code = _text(form, f"part{i}")
        if code:
            items.append(JobItem(code, _int(form, f"qty{i}", minimum=1)))
    if not items:
        raise FormError("part1", "a job needs at least one kit or part")
    return items


async def jobs_add(request: Request) -> Response:
    who = auth.require(request, "jobs")
    web: Web = request.app.state.web
    form = await request.form()
    auth.check_csrf(request, form)

    def go(s):
        from inventory.history.jobs import record_job
        from inventory.history.service import new_job_ref

        fork = _text(form, "fork")
        if not fork:
            raise FormError("fork", "pick the fork family")
        level = _text(form, "service") or ""
        if level not in SERVICE_LEVELS:
            raise FormError("service", f"pick a service level ({', '.join(SERVICE_LEVELS)})")
        day = _day(_text(form, "date"), "date", booking=True) or date.today()
        if day > date.today():
            raise FormError("date", f"{day.isoformat()} is in the future")
        items = _job_items(form)
        hours = _int(form, "hours", minimum=0) if _text(form, "hours") else None
        ref = new_job_ref(s, day)
        record_job(s, ref=ref, day=day, fork=fork, service=level, items=items, hours=hours)
        return ref
    values = {k: v for k, v in form.items() if k != "csrf"}
    try:
        ref = await web.write(go, who)
    except FormError as exc:
        return await jobs_page(request, {exc.field: exc.message}, values, 400)
    except InventoryError as exc:
        return await jobs_page(request, {field_of(exc, "part1", {"fork": "fork",
                                                                 "part": "part1"}):
                                         message_of(exc)}, values, 400)
    return RedirectResponse(f"/jobs/{ref}", 303)


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
            part = _text(form, "part")
            if not part:
                raise FormError("return-part", "pick the part that came back")
            got = stock.return_from_job(s, ref, part, _int(form, "qty", minimum=1))
            return f"returned {sum(m.qty for m in got.movements)} x {part} to stock"
        reason = _text(form, "reason")
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

    return RedirectResponse(f"/jobs/{ref}?done={quote(done)}", 303)


async def job_page(request: Request, errors: dict | None = None,
                   status: int = 200) -> Response:
    who = auth.require(request, "jobs")
    web: Web = request.app.state.web
    ref = request.path_params["ref"]

    def go(s):
        from inventory.history.jobs import job_detail

        try:
            return job_detail(s, ref)
        except InventoryError:
            return None
    found = await web.read(go, who)
    if found is None:
        raise HTTPException(404)
    row, moves = found
    return page(request, "job.html", who, status=status, job=row, moves=moves,
                errors=errors or {}, done=request.query_params.get("done"))


# -- plan

def _plan(s, q) -> dict:
    from inventory.ordering.service import make_plan, plan_to_dict

    as_of = _day(q.get("date"), "date") or date.today()
    season = _day(q.get("season_start"), "season_start")
    return plan_to_dict(make_plan(s, as_of=as_of, season_start=season))


async def plan_page(request: Request, errors: dict | None = None, status: int = 200) -> Response:
    who = auth.require(request, "plan")
    web: Web = request.app.state.web
    q = dict(request.query_params)

    def go(s):
        from inventory.ordering.service import open_orders

        orders = open_orders(s)
        if not q.get("date") and not q.get("season_start"):
            return None, orders, {}
        try:
            return _plan(s, q), orders, {}
        except FormError as exc:
            return None, orders, {exc.field: exc.message}
        except InventoryError as exc:
            return None, orders, {field_of(exc, "season_start", {"season start":
                                                                 "season_start"}):
                                  message_of(exc)}
    plan, orders, errs = await web.read(go, who)
    errs = (errors or {}) | errs
    return page(request, "plan.html", who, status=400 if errs else status, plan=plan,
                orders=orders, values=q, errors=errs, done=request.query_params.get("done"))


# A chart PNG is about 65 KB (measured on the demo's kits): two per page keep a charts page
# under the issue's 200 KB transferred; the rest are on the next pages.
CHARTS_PER_PAGE = 2


def _chart_dir() -> Path:
    import tempfile

    d = Path(tempfile.gettempdir()) / "inventory-charts"
    d.mkdir(mode=0o700, exist_ok=True)
    return d


async def plan_charts(request: Request) -> Response:
    """Forecast charts (history, forecast, 10-90 % range) of the parts in the plan (or, with
    ``by=kit`` / ``by=family``, the busiest kits / fork families), drawn
    in one forecast run and kept in a temporary folder for the images to be fetched."""
    import re
    import secrets

    who = auth.require(request, "plan")
    web: Web = request.app.state.web
    q = dict(request.query_params)
    by = q.get("by") if q.get("by") in ("family", "kit") else "part"

    def go(s):
        from inventory.forecast.charts import chart_name
        from inventory.forecast.service import forecast_command

        as_of = _day(q.get("date"), "date") or date.today()
        codes = []
        if by == "part":
            plan = _plan(s, q)
            codes = sorted({ln["part"] for o in plan["orders"] for ln in o["lines"]})
        token = secrets.token_hex(6)
        folder = _chart_dir() / token
        try:
            report, chosen, _ = forecast_command(s, today=as_of, top=0 if codes else 12,
                                                 parts=(), charts=None, defaults=False,
                                                 by=by)
        except InventoryError as exc:
            return token, [], (message_of(exc), 1)
        known = {x.code: x for x in report.series}
        chosen = [known[c] for c in codes if c in known] or chosen
        from inventory.forecast.service import write_outputs

        pages = max(1, -(-len(chosen) // CHARTS_PER_PAGE))
        shown = chosen[(min(at, pages) - 1) * CHARTS_PER_PAGE:][:CHARTS_PER_PAGE]
        write_outputs(report, shown, charts=folder, defaults=False)
        return token, [(x.code, chart_name(report, x)) for x in shown], (None, pages)
    try:
        at = max(1, int(q.get("page") or 1))
    except ValueError:
        at = 1
    try:
        token, charts, (err, pages) = await web.read(go, who)
    except FormError as exc:
        return await plan_page(request, {exc.field: exc.message}, 400)
    names = [(c, n) for c, n in charts if re.fullmatch(r"[A-Za-z0-9._-]+", n)]
    return page(request, "plan_charts.html", who, token=token, charts=names, error=err,
                values=q, by=by, at=min(at, pages), pages=pages)


async def plan_chart_png(request: Request) -> Response:
    import re

    from starlette.responses import FileResponse

    auth.require(request, "plan")
    token, name = request.path_params["token"], request.path_params["name"]
    if not re.fullmatch(r"[0-9a-f]{12}", token) or not re.fullmatch(r"[A-Za-z0-9._-]+\.png",
                                                                     name):
        raise HTTPException(404)
    path = _chart_dir() / token / name
    if not path.exists():
        raise HTTPException(404)
    return FileResponse(path, media_type="image/png")


async def plan_order_xlsx(request: Request) -> Response:
    """One purchase order as a workbook (header and lines), for the manager."""
    who = auth.require(request, "orders")
    web: Web = request.app.state.web
    ref = request.path_params["ref"]

    def go(s):
        import tempfile

        from inventory.ordering.service import write_order_file

        with tempfile.TemporaryDirectory() as tmp:
            path = Path(tmp) / "order.xlsx"
            detail = write_order_file(s, ref, path)
            return detail["ref"], path.read_bytes()
    try:
        name, data = await web.read(go, who)
    except InventoryError as exc:
        raise HTTPException(404, message_of(exc)) from None
    return workbook_download(data, f"order-{name}.xlsx")


async def plan_orders(request: Request) -> Response:
    who = auth.require(request, "orders")
    web: Web = request.app.state.web
    form = await request.form()
    auth.check_csrf(request, form)

    def go(s):
        from inventory.ordering.service import record_orders

        n = _int(form, "lines", minimum=0)
        lines, dates = [], {}
        for i in range(n):
            sup, part = _text(form, f"supplier-{i}"), _text(form, f"part-{i}")
            if not sup or not part:
                raise FormError(f"qty-{i}", "this line lost its supplier or part: reload")
            qty = _int(form, f"qty-{i}", minimum=0)
            lines.append((sup, part, qty, _money(form, f"cost-{i}"),
                          str(form.get(f"reason-{i}") or "")[:400]))
            dates[sup] = (_day(_text(form, f"order_by-{i}"), f"qty-{i}"),
                          _day(_text(form, f"expected-{i}"), f"qty-{i}"))
        made = record_orders(s, lines, created=date.today(), dates=dates)
        return ", ".join(o.ref for o in made)
    try:
        refs = await web.write(go, who)
    except FormError as exc:
        return await plan_page(request, {exc.field: exc.message}, 400)
    except InventoryError as exc:
        return await plan_page(request, {"orders": message_of(exc)}, 400)
    from urllib.parse import quote

    return RedirectResponse(f"/plan?done={quote('created ' + refs)}", 303)


# -- month end

def _month(s, text: str | None):
    from inventory.monthend.aggregates import Month
    from inventory.monthend.service import latest_complete_month

    if not text:
        return latest_complete_month(s, date.today())
    try:
        y, m = (int(x) for x in text.strip().split("-"))
        return Month(y, m)
    except Exception:
        raise FormError("month", f"expected a month like 2026-11, got {text!r}") from None


async def month_page(request: Request, errors: dict | None = None,
                     status: int = 200) -> Response:
    who = auth.require(request, "month_end")
    web: Web = request.app.state.web
    q = request.query_params

    def go(s):
        from inventory.monthend import service as monthend

        try:
            month = _month(s, q.get("month"))
        except FormError as exc:
            return None, None, {exc.field: exc.message}
        closed = None
        if hasattr(monthend, "is_closed"):
            closed = monthend.is_closed(s, month.label)
        return month, closed, {}
    month, closed, errs = await web.read(go, who)
    errs = (errors or {}) | errs
    from inventory.monthend import service as monthend

    return page(request, "month_end.html", who, status=400 if errs else status, month=month,
                closed=closed, errors=errs, values=dict(q),
                can_close=hasattr(monthend, "close_month") and auth.may(request,
                                                                         "month_close"),
                done=q.get("done"))


async def month_report(request: Request) -> Response:
    who = auth.require(request, "month_end")
    web: Web = request.app.state.web
    label = request.path_params["month"]

    def go(s):
        from inventory.monthend.html import render_html
        from inventory.monthend.report import month_report as build

        return render_html(build(s, _month(s, label), today=date.today()))
    try:
        html = await web.read(go, who)
    except FormError as exc:
        raise HTTPException(404, exc.message) from None
    return HTMLResponse(html)


async def month_xlsx(request: Request) -> Response:
    who = auth.require(request, "month_end")
    web: Web = request.app.state.web
    label = request.path_params["month"]

    def go(s):
        import tempfile

        from inventory.monthend.service import write_month_end

        month = _month(s, label)
        with tempfile.TemporaryDirectory() as tmp:
            path = Path(tmp) / f"stock-{month.label}.xlsx"
            write_month_end(s, month, today=date.today(), xlsx=path)
            return month.label, path.read_bytes()
    try:
        name, data = await web.read(go, who)
    except FormError as exc:
        raise HTTPException(404, exc.message) from None
    return workbook_download(data, f"stock-{name}.xlsx")


async def month_close(request: Request) -> Response:
    who = auth.require(request, "month_close")
    web: Web = request.app.state.web
    form = await request.form()
    auth.check_csrf(request, form)
    from inventory.monthend import service as monthend

    if not hasattr(monthend, "close_month"):
        return await month_page(request, {"close": "closing a month is not available in this "
                                          "version"}, 400)

    def go(s):
        month = _month(s, _text(form, "month"))
        monthend.close_month(s, month.label, today=date.today(), user=who["name"])
        return month.label
    try:
        label = await web.write(go, who)
    except FormError as exc:
        return await month_page(request, {exc.field: exc.message}, 400)
    except InventoryError as exc:
        return await month_page(request, {"close": message_of(exc)}, 400)
    return RedirectResponse(f"/month-end?month={label}&done=closed%20{label}", 303)


# -- imports

IMPORT_KINDS = ("history", "receipts", "counts", "catalog")
MAX_UPLOAD = 20 * 1024 * 1024
DATE_ORDERS = {"": None, "dmy": "dmy", "mdy": "mdy"}


def _upload_dir() -> Path:
    import tempfile

    d = Path(tempfile.gettempdir()) / "inventory-uploads"
    d.mkdir(mode=0o700, exist_ok=True)
    return d


def _kinds() -> tuple[str, ...]:
    from inventory.history.service import KINDS

    return tuple(KINDS)


async def imports_page(request: Request, report: dict | None = None, errors: dict | None = None,
                       values: dict | None = None, status: int = 200,
                       forks: list[str] | None = None) -> Response:
    who = auth.require(request, "imports")
    if forks is None:
        web: Web = request.app.state.web

        def go(s):
            from inventory.history.service import fork_codes

            return fork_codes(s)
        forks = await web.read(go, who)
    return page(request, "imports.html", who, status=status, kinds=_kinds(), report=report,
                errors=errors or {}, values=values or {}, families=forks,
                upload=request.session.get("upload"), done=request.query_params.get("done"))


def _decisions(form, report_forks) -> dict[str, str]:
    out = {}
    for i in range(int(form.get("nforks") or 0)):
        text, code = str(form.get(f"forktext-{i}") or ""), _text(form, f"fork-{i}")
        if text and code:
            out[text] = code
    return out


async def _run_import(request: Request, who: dict, up: dict, form, *, apply: bool):
    """Preview (rolled back) or apply the uploaded file with the page's fork decisions."""
    web: Web = request.app.state.web
    decisions = _decisions(form, None) if form is not None else {}
    settings = dict(date_order=up.get("order"), review=str(Path(up["path"]).with_suffix(
        ".review.xlsx")))

    def go(s):
        from inventory.history.service import fork_codes, import_deciding

        try:
            rep = import_deciding(s, up["path"], kind=up["kind"], apply=apply,
                                  forks=decisions, **settings)
            return rep.to_dict() | {"ok": rep.ok}, None, fork_codes(s)
        except InventoryError as exc:
            failed = getattr(exc, "report", None)
            d = failed.to_dict() | {"ok": False} if failed is not None else None
            return d, message_of(exc), fork_codes(s)

    if apply:
        return await web.write(go, who), decisions

    def dry():
        from sqlmodel import Session

        with acting_as(who["name"]), Session(web.engine) as s:
            try:
                return go(s)
            finally:
                s.rollback()
    return await run_in_threadpool(dry), decisions


async def imports_preview(request: Request) -> Response:
    import secrets

    who = auth.require(request, "imports")
    form = await request.form(max_part_size=MAX_UPLOAD)
    auth.check_csrf(request, form)
    values = {"kind": form.get("kind"), "order": form.get("order")}
    kind = _text(form, "kind") or ""
    if kind not in _kinds():
        return await imports_page(request, errors={"kind": f"pick what the file holds "
                                                   f"({', '.join(_kinds())})"},
                                  values=values, status=400)
    order = str(form.get("order") or "")
    if order not in DATE_ORDERS:
        return await imports_page(request, errors={"order": "pick dmy, mdy or from the file"},
                                  values=values, status=400)
    upload = form.get("file")
    name = Path(getattr(upload, "filename", "") or "").name
    if not name:
        return await imports_page(request, errors={"file": "choose a .xlsx or .csv file"},
                                  values=values, status=400)
    if Path(name).suffix.lower() not in (".xlsx", ".csv"):
        return await imports_page(request, errors={"file": f"{name}: expected a .xlsx or "
                                                   ".csv file"}, values=values, status=400)
    data = await upload.read()
    if len(data) > MAX_UPLOAD:
        return await imports_page(request, errors={"file": f"{name} is larger than 20 MB"},
                                  values=values, status=400)
    token = secrets.token_hex(8)
    folder = _upload_dir() / token
    folder.mkdir(mode=0o700)
    path = folder / name
    path.write_bytes(data)
    up = {"token": token, "path": str(path), "kind": kind, "order": DATE_ORDERS[order],
          "name": name}
    request.session["upload"] = up
    (rep, err, forks), _ = await _run_import(request, who, up, None, apply=False)
    return await imports_page(request, report=rep, errors={"file": err} if err and not rep
                              else {}, values=values, forks=forks,
                              status=200 if rep and rep["ok"] else 400)


async def imports_apply(request: Request) -> Response:
    who = auth.require(request, "imports")
    form = await request.form()
    auth.check_csrf(request, form)
    up = request.session.get("upload")
    if not up or up.get("token") != form.get("token") or not Path(up["path"]).exists():
        return await imports_page(request, errors={"file": "the uploaded file is gone: "
                                                   "upload it again"}, status=400)
    apply = form.get("action") == "apply"
    (rep, err, forks), decisions = await _run_import(request, who, up, form, apply=apply)
    if apply and rep and not err:
        request.session.pop("upload", None)
        from urllib.parse import quote

        return RedirectResponse("/imports?done=" + quote(
            f"applied {up['name']}: {rep.get('new', 0)} new, batch {rep.get('batch')}"
            if rep.get("applied") else f"{up['name']}: nothing new"), 303)
    return await imports_page(request, report=rep, forks=forks,
                              errors={"apply": err} if err else {},
                              values={"decisions": decisions},
                              status=200 if rep and rep.get("ok") and not err else 400)


# ------------------------------------------------------------------------------- API

def _api_who(request: Request, right: str) -> dict:
    return auth.require(request, right)


async def api_match(request: Request) -> Response:
    who = _api_who(request, "bench")
    web: Web = request.app.state.web
    q = dict(request.query_params)
    try:
        return json_response(await web.read(lambda s: _match(web, s, q), who))
    except InventoryError as exc:
        return json_response({"error": message_of(exc),
                              "field": field_of(exc, "id", BENCH_FIELDS)}, 400)


async def api_fit(request: Request) -> Response:
    who = _api_who(request, "bench")
    web: Web = request.app.state.web
    code = request.path_params["code"]

    def go(s):
        from inventory.bench import service as bench
        from inventory.core.convert import all_seats

        spec = bench.resolve_part(s, code)
        return [r.to_dict() for r in bench.fit_everywhere(spec, all_seats(s),
                                                          include_fail=True)]
    try:
        return json_response(await web.read(go, who))
    except InventoryError as exc:
        return json_response({"error": message_of(exc), "field": "part"}, 404)


async def api_stock(request: Request) -> Response:
    who = _api_who(request, "stock_view")
    web: Web = request.app.state.web
    q = request.query_params

    def go(s):
        from inventory.stock import service as stock

        return [ln.to_dict() for ln in stock.on_hand(
            s, part=q.get("part") or None, location=q.get("location") or None,
            by_lot=q.get("by_lot", "").lower() in ("1", "true", "yes"))]
    try:
        return json_response(await web.read(go, who))
    except InventoryError as exc:
        return json_response({"error": message_of(exc)}, 400)


async def api_jobs(request: Request) -> Response:
    who = _api_who(request, "jobs")
    web: Web = request.app.state.web

    def go(s):
        from inventory.history.jobs import list_jobs

        return [j.to_dict() for j in list_jobs(s, limit=int(request.query_params.get("limit")
                                                               or 50))]
    return json_response(await web.read(go, who))


async def api_plan(request: Request) -> Response:
    who = _api_who(request, "plan")
    web: Web = request.app.state.web
    q = dict(request.query_params)
    try:
        return json_response(await web.read(lambda s: _plan(s, q), who))
    except FormError as exc:
        return json_response({"error": exc.message, "field": exc.field}, 400)
    except InventoryError as exc:
        return json_response({"error": message_of(exc)}, 400)


async def api_me(request: Request) -> Response:
    who = auth.person(request)
    if who is None:
        raise auth.SignInNeeded()
    return json_response(who)


def openapi() -> dict:
    def op(summary, params=(), tag="bench"):
        return {"get": {"summary": summary, "tags": [tag],
                        "parameters": [{"name": n, "in": "query", "required": False,
                                        "schema": {"type": "string"}, "description": d}
                                       for n, d in params],
                        "responses": {"200": {"description": "OK (JSON)"},
                                      "400": {"description": "bad input: error and field"},
                                      "401": {"description": "not signed in"},
                                      "403": {"description": "role without this right"}}}}
    return {
        "openapi": "3.1.0",
        "info": {"title": "inventory", "version": "0.1.0",
                 "description": "The shop's JSON API: the same JSON as the command line's "
                                "--json for the same question. Sign in at /login first (a "
                                "session cookie)."},
        "paths": {
            "/api/match": op("Rank parts and standard sizes against caliper readings "
                             "(= inventory match --json)",
                             [("id", "inside diameter"), ("od", "outside diameter"),
                              ("height", "height"), ("cs", "cross-section"),
                              ("kind", "seal kind"), ("tol", "tolerance"),
                              ("material", "material"), ("fork", "fork family"),
                              ("seat", "seat"), ("limit", "candidates per source"),
                              ("unit", "mm or in"), ("no_standard", "1: leave out standards")]),
            "/api/parts/{code}/fit": op("Fit of one part in every seat (= inventory fit --json)"),
            "/api/stock": op("Stock on hand (= inventory stock on-hand --json)",
                             [("part", "part code"), ("location", "location"),
                              ("by_lot", "1: one line per lot")], "stock"),
            "/api/jobs": op("Recent jobs (= inventory job list --json)", [("limit", "how many")],
                            "jobs"),
            "/api/plan": op("The replenishment plan (= inventory plan --json)",
                            [("date", "plan date"), ("season_start", "season start")], "plan"),
            "/api/me": op("Who is signed in", tag="people"),
        },
    }


async def api_openapi(request: Request) -> Response:
    return JSONResponse(openapi())


# ------------------------------------------------------------------------ errors, app

def _wants_json(request: Request) -> bool:
    return request.url.path.startswith("/api/")


async def on_sign_in_needed(request: Request, exc: auth.SignInNeeded) -> Response:
    if _wants_json(request):
        return JSONResponse({"error": "sign in first" if not exc.expired
                             else "session expired: sign in again"}, 401)
    from urllib.parse import quote

    nxt = request.url.path + (f"?{request.url.query}" if request.url.query else "")
    extra = "&expired=1" if exc.expired else ""
    return RedirectResponse(f"/login?next={quote(nxt)}{extra}", 303)


async def on_forbidden(request: Request, exc: auth.Forbidden) -> Response:
    if _wants_json(request):
        return JSONResponse({"error": f"your role may not do this ({exc.right})"}, 403)
    who = auth.person(request)
    return page(request, "error.html", who, status=403, title="Not for your role",
                message=f"Your role ({who['role'] if who else '-'}) may not do this "
                        f"({exc.right.replace('_', ' ')}). Ask a manager.")


async def on_csrf(request: Request, exc: auth.CsrfRefused) -> Response:
    if _wants_json(request):
        return JSONResponse({"error": "missing or wrong CSRF token"}, 403)
    who = auth.person(request) if request.session.get("person") else None
    return page(request, "error.html", who, status=403, title="Form refused",
                message="This form was stale or came from elsewhere, so nothing was saved. "
                        "Go back, reload the page and try again.")


async def on_http(request: Request, exc: HTTPException) -> Response:
    if _wants_json(request):
        return JSONResponse({"error": exc.detail}, exc.status_code)
    try:
        who = auth.person(request)
    except auth.SignInNeeded:
        who = None
    title = {404: "Not found", 405: "Not allowed"}.get(exc.status_code, "Error")
    msg = "There is no such page." if exc.status_code == 404 else str(exc.detail)
    return page(request, "error.html", who, status=exc.status_code, title=title, message=msg)


async def on_error(request: Request, exc: Exception) -> Response:
    if _wants_json(request):
        return JSONResponse({"error": "the server failed: nothing was saved"}, 500)
    return HTMLResponse("<!doctype html><title>Server error</title><h1>Something went wrong"
                        "</h1><p>Nothing was saved. Go back and try again; if it happens "
                        "again, tell the person who runs the server.</p>", 500)


def create_app(url: str | None = None, *, secret: str | None = None,
               secure_cookies: bool | None = None) -> Starlette:
    """The app on database ``url`` (default ``$INVENTORY_DB``)."""
    if secure_cookies is None:
        secure_cookies = os.environ.get("INVENTORY_SECURE_COOKIES", "") == "1"
    web = Web(url)
    routes = [
        Route("/", home),
        Route("/login", login_form, methods=["GET"]),
        Route("/login", login, methods=["POST"]),
        Route("/logout", logout, methods=["POST"]),
        Route("/bench", bench_page),
        Route("/bench/part/{code:path}", part_page),
        Route("/bench/use", bench_use, methods=["POST"]),
        Route("/stock", stock_page),
        Route("/stock/count-sheet", count_sheet, methods=["POST"]),
        Route("/stock/{action}", stock_action, methods=["POST"]),
        Route("/jobs", jobs_page),
        Route("/jobs", jobs_add, methods=["POST"]),
        Route("/jobs/{ref}", job_page),
        Route("/jobs/{ref}/{what}", job_undo, methods=["POST"]),
        Route("/plan", plan_page),
        Route("/plan/orders", plan_orders, methods=["POST"]),
        Route("/plan/orders/{ref}.xlsx", plan_order_xlsx),
        Route("/plan/charts", plan_charts),
        Route("/plan/charts/{token}/{name}", plan_chart_png),
        Route("/month-end", month_page),
        Route("/month-end/{month}/report", month_report),
        Route("/month-end/{month}.xlsx", month_xlsx),
        Route("/month-end/close", month_close, methods=["POST"]),
        Route("/imports", imports_page),
        Route("/imports/preview", imports_preview, methods=["POST"]),
        Route("/imports/apply", imports_apply, methods=["POST"]),
        Route("/api/match", api_match),
        Route("/api/parts/{code:path}/fit", api_fit),
        Route("/api/stock", api_stock),
        Route("/api/jobs", api_jobs),
        Route("/api/plan", api_plan),
        Route("/api/me", api_me),
        Route("/api/openapi.json", api_openapi),
        Mount("/static", StaticFiles(directory=str(HERE / "static")), name="static"),
    ]
    app = Starlette(
        routes=routes,
        middleware=[Middleware(GZipMiddleware, minimum_size=1000),
                    Middleware(SessionMiddleware, secret_key=secret or auth.secret_key(),
                               session_cookie="inventory_session", max_age=auth.IDLE_SECONDS,
                               same_site="lax", https_only=secure_cookies)],
        exception_handlers={auth.SignInNeeded: on_sign_in_needed,
                            auth.Forbidden: on_forbidden, auth.CsrfRefused: on_csrf,
                            HTTPException: on_http, Exception: on_error})
    app.state.web = web
    return app
