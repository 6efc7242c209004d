"""People and roles: the `inventory user` commands, Argon2 hashes, the sign-in throttle, and
the person recorded on each movement."""

from __future__ import annotations

from datetime import UTC, datetime, timedelta

import pytest
from sqlmodel import Session, select

from inventory.core.actor import acting_as
from inventory.core.db import transaction
from inventory.core.errors import InventoryError
from inventory.core.tables import Movement, Person
from inventory.people import service as people
from inventory.stock import ledger
from tests.conftest import inv


def test_add_hashes_with_argon2id_and_authenticates(store):
    with transaction(store) as s:
        people.add_person(s, "sam", "technician", "bench-secret-1")
    with Session(store) as s:
        row = s.exec(select(Person)).one()
    # PHC string format of Argon2id (RFC 9106 variant "id"), verified by the library itself
    assert row.password_hash.startswith("$argon2id$")
    from argon2 import PasswordHasher

    assert PasswordHasher().verify(row.password_hash, "bench-secret-1")
    assert "bench-secret-1" not in row.password_hash
    with transaction(store) as s:
        assert people.authenticate(s, "sam", "bench-secret-1").role == "technician"


def test_wrong_password_is_throttled_after_five_failures(store):
    with transaction(store) as s:
        people.add_person(s, "ana", "manager", "office-secret")
    t0 = datetime(2026, 3, 1, 9, 0, tzinfo=UTC)
    with transaction(store) as s:
        with pytest.raises(people.SignInRefused, match="wrong name or password"):
            people.authenticate(s, "nobody", "guess", now=t0)
    # the failures are counted in the caller's transaction; the web app commits them
    with transaction(store) as s:
        for _ in range(people.MAX_FAILURES):
            with pytest.raises(people.SignInRefused, match="wrong name or password"):
                people.authenticate(s, "ana", "guess", now=t0)
    with transaction(store) as s:
        with pytest.raises(people.SignInRefused, match="too many failed sign-ins"):
            people.authenticate(s, "ana", "office-secret", now=t0 + timedelta(seconds=10))
    with transaction(store) as s:  # after the lock the right password works again
        later = t0 + timedelta(seconds=people.LOCK_SECONDS + 1)
        assert people.authenticate(s, "ana", "office-secret", now=later).name == "ana"


def test_disabled_person_cannot_sign_in_and_roles_are_checked(store):
    with transaction(store) as s:
        people.add_person(s, "lee", "admin", "admin-secret")
        people.disable_person(s, "lee")
    with transaction(store) as s:
        with pytest.raises(people.SignInRefused, match="disabled"):
            people.authenticate(s, "lee", "admin-secret")
    with transaction(store) as s:
        with pytest.raises(InventoryError, match="unknown role"):
            people.add_person(s, "kim", "boss", "long-enough")
        with pytest.raises(InventoryError, match="too short"):
            people.add_person(s, "kim", "manager", "short")
    assert people.may("manager", "receive") and not people.may("technician", "receive")
    assert people.may("admin", "users") and not people.may("manager", "users")


def test_movement_records_the_person_acting(store):
    with transaction(store) as s, acting_as("sam"):
        ledger.receive(s, ledger.Receipt("OR-214", 5, "0.25"))
    with transaction(store) as s:
        ledger.issue(s, ledger.Issue("OR-214", 1, user="cli-admin"))
    with Session(store) as s:
        users = [m.user for m in s.exec(select(Movement).order_by(Movement.id))]
    assert users == ["sam", "cli-admin"]


def test_user_commands(monkeypatch, capsys, tmp_path, db_url):
    import io

    from inventory.core import migrate
    from inventory.core.db import make_engine

    migrate.upgrade(make_engine(db_url, fresh=True))
    monkeypatch.setattr("sys.stdin", io.StringIO("a-good-password\n"))
    code, out, err = inv(monkeypatch, capsys, "--db", db_url, "user", "add", "sam",
                         "--role", "technician", "--password-stdin")
    assert code == 0, err
    assert "added sam (technician)" in out
    monkeypatch.setattr("sys.stdin", io.StringIO("a-good-password\n"))
    code, out, err = inv(monkeypatch, capsys, "--db", db_url, "user", "add", "sam",
                         "--role", "manager", "--password-stdin")
    assert code == 1 and "exists already" in err
    code, out, err = inv(monkeypatch, capsys, "--db", db_url, "user", "disable", "sam")
    assert code == 0
    code, out, err = inv(monkeypatch, capsys, "--db", db_url, "user", "list", "--json")
    import json

    assert json.loads(out)[0] | {"created": None} == {"name": "sam", "role": "technician",
                                                      "active": False, "created": None}
