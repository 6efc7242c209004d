"""Plain SQL reads for the commands that only look things up (``inventory match``).

A lookup that runs once per command should not pay for loading SQLAlchemy and the ORM
models (about 0.4 s of start-up): on SQLite it opens the standard library's ``sqlite3``
connection read-only (``file:...?mode=ro``), one deferred transaction for a consistent
snapshot, never the write lock; any other database (PostgreSQL) is read through a
SQLAlchemy connection in a read-only ``REPEATABLE READ`` transaction, as
:func:`inventory.core.db.read_transaction` reads it. Both take ``:name`` parameters; a list
or tuple value is expanded into ``(:name_0, :name_1, ...)`` for ``IN``.

The schema check is the one every command makes (:mod:`inventory.core.migrate`: the version
row against :data:`~inventory.core.migrate.HEAD_REVISION`) and the demo-build check the
one of :mod:`inventory.core.build_mark`, both by one SELECT.
"""

from __future__ import annotations

import os
import re
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any
from urllib.parse import quote

from inventory.core.errors import InventoryError

DEFAULT_URL = "sqlite:///inventory.db"
ENV_VAR = "INVENTORY_DB"
#: Seconds a write waits for another writer before giving up (both databases).
DEFAULT_LOCK_TIMEOUT = 5.0
LOCK_TIMEOUT_VAR = "INVENTORY_LOCK_TIMEOUT"
#: The kinds of the build marks (inventory.core.build_mark.STARTED / FINISHED).
BUILD_STARTED, BUILD_FINISHED = "build:", "built:"


def resolve_url(url: str | None = None) -> str:
    """The database URL: the argument, else ``$INVENTORY_DB``, else ``inventory.db`` here.

    A bare path (``demo.db``) is taken as a SQLite file; ``postgresql://`` URLs use psycopg 3.
    """
    url = url or os.environ.get(ENV_VAR) or DEFAULT_URL
    if "://" not in url:
        url = f"sqlite:///{url}"
    if url.startswith("postgresql://") or url.startswith("postgres://"):
        url = "postgresql+psycopg://" + url.split("://", 1)[1]
    return url


def lock_timeout(value: float | str | None = None) -> float:
    """Seconds to wait for a lock: ``value``, else ``$INVENTORY_LOCK_TIMEOUT``, else the
    default; a positive finite number of at most an hour."""
    raw = value if value is not None else os.environ.get(LOCK_TIMEOUT_VAR)
    if raw is None or raw == "":
        return DEFAULT_LOCK_TIMEOUT
    try:
        seconds = float(raw)
    except (TypeError, ValueError):
        seconds = float("nan")
    if not (0 < seconds <= 3600):  # also refuses nan
        raise InventoryError(f"bad {LOCK_TIMEOUT_VAR} {raw!r}: expected seconds between 0 "
                             "and 3600, e.g. 5")
    return seconds


def sqlite_path(url: str) -> str | None:
    """The file of a ``sqlite://`` URL (``""`` or ``:memory:`` for an in-memory database),
    None for any other database. As SQLAlchemy reads it: ``sqlite:///rel.db`` is relative,
    ``sqlite:////abs.db`` absolute; a query string is not part of the path."""
    if not url.startswith("sqlite"):
        return None
    scheme, _, rest = url.partition("://")
    if scheme.split("+")[0] != "sqlite":
        return None
    return rest[1:].split("?", 1)[0] if rest.startswith("/") else rest.split("?", 1)[0]


#: The database the last reader opened (named in the one-line error of a failure).
last_url: str | None = None

_PARAM = re.compile(r"(?<![:\w]):(\w+)\b")


def expand(sql: str, params: dict[str, Any]) -> tuple[str, dict[str, Any]]:
    """``IN :codes`` with a list becomes ``IN (:codes_0, :codes_1)`` (an empty list: a
    ``(NULL)`` that matches nothing); other parameters are passed as they are."""
    lists = {k: v for k, v in params.items() if isinstance(v, list | tuple)}
    if not lists:
        return sql, params
    out = {k: v for k, v in params.items() if k not in lists}

    def repl(m: re.Match[str]) -> str:
        name = m.group(1)
        if name not in lists:
            return m.group(0)
        values = lists[name]
        out.update({f"{name}_{i}": v for i, v in enumerate(values)})
        return "(" + (", ".join(f":{name}_{i}" for i in range(len(values))) or "NULL") + ")"

    return _PARAM.sub(repl, sql), out


class Reader:
    """One read-only transaction: :meth:`rows` runs a SELECT and returns its rows as tuples."""

    def __init__(self, url: str) -> None:
        self.url = url
        self.path = sqlite_path(url)
        self.dialect = "sqlite" if self.path is not None else "other"
        self._sqlite: Any = None
        self._conn: Any = None
        self._trans: Any = None

    # -- opening and closing
    def open(self) -> Reader:
        global last_url
        last_url = self.url
        if self.path is not None and self.path not in ("", ":memory:"):
            import sqlite3

            uri = f"file:{quote(str(Path(self.path).expanduser().resolve()))}?mode=ro"
            con = sqlite3.connect(uri, uri=True, timeout=lock_timeout(),
                                  isolation_level=None, check_same_thread=False)
            con.execute("BEGIN DEFERRED")  # one snapshot for every SELECT of this read
            self._sqlite = con
        else:  # PostgreSQL (or an in-memory SQLite): the engine the other commands use
            from inventory.core.db import make_engine, read_only

            engine = make_engine(self.url)
            self.dialect = engine.dialect.name
            self._conn = read_only(engine).connect()
            self._trans = self._conn.begin()
        return self

    def close(self) -> None:
        if self._sqlite is not None:
            try:
                self._sqlite.execute("ROLLBACK")
            finally:
                self._sqlite.close()
                self._sqlite = None
        if self._conn is not None:
            try:
                self._trans.rollback()
            finally:
                self._conn.close()
                self._conn = None

    # -- reading
    def rows(self, sql: str, **params: Any) -> list[tuple]:
        """The rows of one SELECT with ``:name`` parameters (lists expand for ``IN``)."""
        sql, params = expand(sql, params)
        if self._sqlite is not None:
            return self._sqlite.execute(sql, params).fetchall()
        from sqlalchemy import text

        return [tuple(r) for r in self._conn.execute(text(sql), params)]

    def has_table(self, name: str) -> bool:
        if self._sqlite is not None:
            return bool(self.rows("SELECT 1 FROM sqlite_master WHERE type = 'table' AND "
                                  "name = :name", name=name))
        from sqlalchemy import inspect

        return bool(inspect(self._conn).has_table(name))

    # -- the checks every command makes
    def shown_url(self) -> str:
        if self.path is not None:
            return self.url
        from sqlalchemy.engine import make_url

        return make_url(self.url).render_as_string(hide_password=True)

    def require_current(self, url_for_hint: str | None = None) -> None:
        """Raise unless the schema is at this version's head (one SELECT of the version
        row; the message is :func:`inventory.core.migrate.schema_problem`'s)."""
        from inventory.core.migrate import VERSION_TABLE, schema_problem

        current = None
        if self.has_table(VERSION_TABLE):
            found = self.rows(f"SELECT version_num FROM {VERSION_TABLE}")
            current = found[0][0] if len(found) == 1 else None
        problem = schema_problem(current, self.shown_url(), url_for_hint)
        if problem is not None:
            raise problem

    def require_finished(self, what: str, hint: str) -> None:
        """Raise when a build of ``what`` started here and did not finish (as
        :func:`inventory.core.build_mark.require_finished`)."""
        kinds = [k for (k,) in self.rows(
            "SELECT kind FROM import_batch WHERE kind IN (:started, :finished)",
            started=BUILD_STARTED + what, finished=BUILD_FINISHED + what)]
        if BUILD_STARTED + what in kinds and BUILD_FINISHED + what not in kinds:
            raise InventoryError(f"{what} build did not finish: {self.shown_url()} holds an "
                                 f"unfinished {what} database", kind="schema", hint=hint)


class SessionReader(Reader):
    """:meth:`Reader.rows` over a caller's open SQLAlchemy session or connection (its
    transaction, its snapshot): the same SQL serves a command's plain read and the web
    app's session."""

    def __init__(self, session: Any) -> None:
        super().__init__("")
        self.dialect = session.get_bind().dialect.name
        self._session = session

    def open(self) -> Reader:
        return self

    def close(self) -> None:
        pass

    def rows(self, sql: str, **params: Any) -> list[tuple]:
        from sqlalchemy import text

        sql, params = expand(sql, params)
        return [tuple(r) for r in self._session.execute(text(sql), params)]


@contextmanager
def open_reader(url: str | None = None) -> Iterator[Reader]:
    """A :class:`Reader` on ``url`` (resolved as :func:`resolve_url`), always rolled back."""
    reader = Reader(resolve_url(url)).open()
    try:
        yield reader
    finally:
        reader.close()
