"""People and roles: add, list, disable, check a password, and what each role may do.

Passwords are hashed with Argon2id (``argon2-cffi``, its default parameters, RFC 9106's
recommended algorithm). Sign-in is throttled per person: after :data:`MAX_FAILURES` wrong
passwords in a row the account is locked for :data:`LOCK_SECONDS`; the count lives in the
database so several server workers share it.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from datetime import UTC, datetime, timedelta

from sqlmodel import Session, select

from inventory.core.errors import InventoryError
from inventory.core.tables import Person

ROLES = ("technician", "manager", "admin")
#: What each role may do; a role has its own rights and those of the roles before it.
RIGHTS: dict[str, frozenset[str]] = {
    "technician": frozenset({"bench", "jobs", "issue", "count", "stock_view"}),
}
RIGHTS["manager"] = RIGHTS["technician"] | {"receive", "adjust", "move", "imports", "plan",
                                            "orders", "month_close", "month_end"}
RIGHTS["admin"] = RIGHTS["manager"] | {"users"}

MAX_FAILURES = 5
LOCK_SECONDS = 300
MIN_PASSWORD = 8
_NAME = re.compile(r"^[A-Za-z0-9][A-Za-z0-9._-]{0,63}$")


def _hasher():
    from argon2 import PasswordHasher

    return PasswordHasher()


def _now() -> datetime:
    return datetime.now(UTC)


def _aware(ts: datetime | None) -> datetime | None:
    if ts is not None and ts.tzinfo is None:
        return ts.replace(tzinfo=UTC)
    return ts


@dataclass(frozen=True, slots=True)
class PersonInfo:
    name: str
    role: str
    active: bool
    created: datetime

    def to_dict(self) -> dict:
        return {"name": self.name, "role": self.role, "active": self.active,
                "created": self.created.isoformat()}

    def may(self, right: str) -> bool:
        return self.active and right in RIGHTS[self.role]


def _info(p: Person) -> PersonInfo:
    return PersonInfo(p.name, p.role, p.active, _aware(p.created) or p.created)


def may(role: str, right: str) -> bool:
    return right in RIGHTS.get(role, frozenset())


def check_role(role: str) -> str:
    r = (role or "").strip().lower()
    if r not in ROLES:
        raise InventoryError(f"unknown role {role!r}", kind="unknown",
                             hint=f"one of {', '.join(ROLES)}")
    return r


def check_name(name: str) -> str:
    n = (name or "").strip()
    if not _NAME.match(n):
        raise InventoryError(f"bad name {name!r}: expected letters, digits, '.', '_' or '-', "
                             "up to 64 characters, starting with a letter or digit")
    return n


def check_password(password: str) -> str:
    if len(password or "") < MIN_PASSWORD:
        raise InventoryError(f"password too short: {MIN_PASSWORD} characters at least")
    return password


def _find(session: Session, name: str) -> Person | None:
    return session.exec(select(Person).where(Person.name == name.strip())).first()


def add_person(session: Session, name: str, role: str, password: str) -> PersonInfo:
    name, role = check_name(name), check_role(role)
    check_password(password)
    if _find(session, name) is not None:
        raise InventoryError(f"person {name!r} exists already", kind="conflict",
                             hint="pick another name, or disable the old account")
    p = Person(name=name, role=role, password_hash=_hasher().hash(password), active=True,
               created=_now())
    session.add(p)
    session.flush()
    return _info(p)


def list_people(session: Session) -> list[PersonInfo]:
    return [_info(p) for p in session.exec(select(Person).order_by(Person.name))]


def get_person(session: Session, name: str) -> PersonInfo | None:
    p = _find(session, name)
    return _info(p) if p else None


def disable_person(session: Session, name: str) -> PersonInfo:
    p = _find(session, name)
    if p is None:
        raise InventoryError(f"unknown person {name!r}", kind="unknown",
                             hint="list them with `inventory user list`")
    p.active = False
    session.add(p)
    session.flush()
    return _info(p)


def set_password(session: Session, name: str, password: str) -> PersonInfo:
    p = _find(session, name)
    if p is None:
        raise InventoryError(f"unknown person {name!r}", kind="unknown")
    p.password_hash = _hasher().hash(check_password(password))
    p.failed_logins, p.locked_until = 0, None
    session.add(p)
    session.flush()
    return _info(p)


class SignInRefused(InventoryError):
    """Wrong name or password, a disabled account, or too many failures (locked)."""


def authenticate(session: Session, name: str, password: str, *,
                 now: datetime | None = None) -> PersonInfo:
    """The person when the password is right and the account active and not locked; else
    :class:`SignInRefused` with a message that does not tell which of name or password was
    wrong. Failures are counted (in the caller's transaction: commit it either way)."""
    from argon2.exceptions import InvalidHashError, VerificationError

    now = now or _now()
    p = _find(session, name or "")
    generic = "wrong name or password"
    if p is None:
        _hasher().hash(password or "x")  # the same work as a real check, so timing tells nothing
        raise SignInRefused(generic)
    locked = _aware(p.locked_until)
    if locked is not None and locked > now:
        mins = max(1, round((locked - now).total_seconds() / 60))
        raise SignInRefused(f"too many failed sign-ins: try again in {mins} minute(s) "
                            "or ask an admin")
    try:
        _hasher().verify(p.password_hash, password or "")
    except (VerificationError, InvalidHashError):
        p.failed_logins += 1
        if p.failed_logins >= MAX_FAILURES:
            p.locked_until = now + timedelta(seconds=LOCK_SECONDS)
            p.failed_logins = 0
        session.add(p)
        session.flush()
        raise SignInRefused(generic) from None
    if not p.active:
        raise SignInRefused("this account is disabled: ask an admin")
    if p.failed_logins or p.locked_until:
        p.failed_logins, p.locked_until = 0, None
        session.add(p)
        session.flush()
    return _info(p)
