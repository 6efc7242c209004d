"""Sessions, roles and CSRF for the web app.

The session is a cookie signed with the server's secret (Starlette's session middleware,
``itsdangerous``), HttpOnly and SameSite=Lax, Secure behind TLS; it holds the person's name,
role, a CSRF token and the time of the last request. Every form that writes carries the
token; a request without it (or with another) is refused before anything is read from it.
"""

from __future__ import annotations

import hmac
import os
import secrets
import time
from pathlib import Path

from starlette.requests import Request

from inventory.people.service import RIGHTS

IDLE_SECONDS = 8 * 3600  # a working day; the next request after that signs in again
SECRET_ENV = "INVENTORY_SECRET_KEY"
SECRET_FILE = "inventory-secret.key"


class SignInNeeded(Exception):
    def __init__(self, expired: bool = False) -> None:
        self.expired = expired


class Forbidden(Exception):
    def __init__(self, right: str) -> None:
        self.right = right


class CsrfRefused(Exception):
    pass


def secret_key(folder: str | Path = ".") -> str:
    """``$INVENTORY_SECRET_KEY``, else a random key kept in ``inventory-secret.key`` (created
    with owner-only permissions), so several workers and restarts share it."""
    key = os.environ.get(SECRET_ENV)
    if key:
        return key
    path = Path(folder) / SECRET_FILE
    if not path.exists():
        fd = os.open(path, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600)
        with os.fdopen(fd, "w") as f:
            f.write(secrets.token_urlsafe(48))
    return path.read_text().strip()


def sign_in(request: Request, name: str, role: str) -> None:
    request.session.clear()
    request.session.update(person=name, role=role, csrf=secrets.token_urlsafe(32),
                           seen=int(time.time()))


def person(request: Request) -> dict | None:
    """``{"name", "role"}`` of the person signed in, or None; an idle session is dropped."""
    s = request.session
    if not s.get("person"):
        return None
    now = int(time.time())
    if now - int(s.get("seen", 0)) > IDLE_SECONDS:
        s.clear()
        raise SignInNeeded(expired=True)
    s["seen"] = now
    return {"name": s["person"], "role": s["role"]}


def require(request: Request, right: str) -> dict:
    who = person(request)
    if who is None:
        raise SignInNeeded()
    if right not in RIGHTS.get(who["role"], frozenset()):
        raise Forbidden(right)
    return who


def may(request: Request, right: str) -> bool:
    role = request.session.get("role")
    return bool(role) and right in RIGHTS.get(role, frozenset())


def csrf_token(request: Request) -> str:
    token = request.session.get("csrf")
    if not token:
        token = secrets.token_urlsafe(32)
        request.session["csrf"] = token
    return token


def check_csrf(request: Request, form) -> None:
    sent = form.get("csrf") or request.headers.get("x-csrf-token") or ""
    want = request.session.get("csrf") or ""
    if not want or not hmac.compare_digest(str(sent), want):
        raise CsrfRefused()
