"""The ASGI app: pages for the bench, stock, jobs, imports, plan and month end, and a JSON
API under ``/api/``. A face: every answer comes from the feature services (the same ones the
command line calls); the handlers (``pages_*.py``, ``api.py``) parse the form, call one
service in one transaction as the person signed in, and render.

This module holds the error pages and the application factory with its route table:
``create_app(url)`` builds it; ``inventory serve`` runs it under uvicorn.
"""

from __future__ import annotations

import os

from starlette.applications import Starlette
from starlette.exceptions import HTTPException
from starlette.middleware import Middleware
from starlette.middleware.gzip import GZipMiddleware
from starlette.middleware.sessions import SessionMiddleware
from starlette.requests import Request
from starlette.responses import HTMLResponse, JSONResponse, RedirectResponse, Response
from starlette.routing import Mount, Route
from starlette.staticfiles import StaticFiles

from inventory.web import auth
from inventory.web.api import api_fit, api_jobs, api_match, api_me, api_openapi, api_plan, api_stock
from inventory.web.pages_bench import bench_page, bench_use, part_page
from inventory.web.pages_imports import imports_apply, imports_page, imports_preview
from inventory.web.pages_jobs import job_add_part, job_page, job_undo, jobs_add, jobs_page
from inventory.web.pages_login import home, login, login_form, logout
from inventory.web.pages_monthend import month_close, month_page, month_report, month_xlsx
from inventory.web.pages_plan import (
    plan_charts,
    plan_order_xlsx,
    plan_orders,
    plan_page,
)
from inventory.web.pages_stock import count_sheet, stock_action, stock_page
from inventory.web.responses import HERE, page
from inventory.web.state import NotReady, Web


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


async def on_not_ready(request: Request, exc: NotReady) -> Response:
    if _wants_json(request):
        return JSONResponse({"error": str(exc)}, 503)
    try:
        who = auth.person(request)
    except auth.SignInNeeded:
        who = None
    return page(request, "error.html", who, status=503, title="Not ready",
                message=f"Nothing was read or saved: {exc}.")


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
        Route("/jobs/{ref}/add", job_add_part, methods=["POST"]),
        Route("/jobs/{ref}/{what}", job_undo, methods=["POST"]),
        Route("/plan", plan_page),
        Route("/plan/orders", plan_orders, methods=["POST"]),
        Route("/plan/orders/{ref}.xlsx", plan_order_xlsx),
        Route("/plan/charts", plan_charts),
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
                            HTTPException: on_http, NotReady: on_not_ready,
                            Exception: on_error})
    app.state.web = web
    return app
