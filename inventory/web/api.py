"""The JSON API under ``/api/``: the same JSON as the command line's ``--json`` for the same
question, and its OpenAPI description.
"""

from __future__ import annotations

from starlette.requests import Request
from starlette.responses import JSONResponse, Response

from inventory.core import parse
from inventory.core.errors import InventoryError
from inventory.web import auth
from inventory.web.forms import FormError, field_of, message_of
from inventory.web.pages_bench import BENCH_FIELDS, run_match
from inventory.web.pages_plan import plan_dict
from inventory.web.responses import json_response
from inventory.web.state import Web


def _api_who(request: Request, right: str) -> dict:
    return auth.require(request, right)


async def api_match(request: Request) -> Response:
    who = _api_who(request, "bench")
    web: Web = request.app.state.web
    q = dict(request.query_params)
    try:
        return json_response(await web.read(lambda s: run_match(web, s, q), who))
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

    try:
        limit = parse.quantity(request.query_params.get("limit") or "50")
    except ValueError as exc:
        return json_response({"error": f"limit: {exc}", "field": "limit"}, 400)

    def go(s):
        from inventory.history.service import list_jobs

        return [j.to_dict() for j in list_jobs(s, limit=limit)]
    return json_response(await web.read(go, who))


async def api_plan(request: Request) -> Response:
    who = _api_who(request, "plan")
    web: Web = request.app.state.web
    q = dict(request.query_params)
    try:
        return json_response(await web.read(lambda s: plan_dict(s, q), who))
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
