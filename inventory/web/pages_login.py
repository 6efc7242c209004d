"""Signing in and out.
"""

from __future__ import annotations

from starlette.requests import Request
from starlette.responses import RedirectResponse, Response

from inventory.web import auth
from inventory.web.forms import message_of, text_field
from inventory.web.responses import page
from inventory.web.state import Web


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
    name, password = text_field(form, "name") or "", str(form.get("password") or "")

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
