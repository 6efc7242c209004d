"""Engine from a URL, transactions, and the schema-version check.

SQLite (the default, a file ``inventory.db`` in the working directory) runs in WAL mode with
foreign keys on; every write transaction starts ``BEGIN IMMEDIATE`` so two writers
serialise instead of failing half-way, while reports and lookups read through
:func:`read_transaction` (deferred, a WAL snapshot) and never take the write lock.
PostgreSQL is reached by URL (psycopg 3); writers lock the
balance rows they change (``SELECT ... FOR UPDATE``).

Waits are bounded: a write that waits longer than ``$INVENTORY_LOCK_TIMEOUT`` seconds
(default :data:`DEFAULT_LOCK_TIMEOUT`) for another writer (SQLite's busy timeout,
PostgreSQL's ``lock_timeout``) fails with one line saying another booking is in progress.
:func:`run_transaction` retries a unit of work a bounded number of times when PostgreSQL
reports a deadlock or a serialisation failure. :func:`explain` turns the database and file
system failures people can act on (locked, disk full, permission, connection, constraint,
value too long) into one :class:`InventoryError` line naming the file, table or value.
"""

from __future__ import annotations

import errno
import functools
import random
import re
import sqlite3
import time
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import TypeVar

from sqlalchemy import event, inspect
from sqlalchemy import exc as sa_exc
from sqlalchemy.engine import Engine, make_url
from sqlmodel import Session, create_engine

from inventory.core.errors import InventoryError

# the URL and the lock timeout are read without SQLAlchemy (the plain reader needs them too)
from inventory.core.sqlread import DEFAULT_LOCK_TIMEOUT as DEFAULT_LOCK_TIMEOUT
from inventory.core.sqlread import DEFAULT_URL as DEFAULT_URL
from inventory.core.sqlread import ENV_VAR as ENV_VAR
from inventory.core.sqlread import LOCK_TIMEOUT_VAR as LOCK_TIMEOUT_VAR
from inventory.core.sqlread import lock_timeout as lock_timeout
from inventory.core.sqlread import resolve_url as resolve_url

#: Attempts of one unit of work when PostgreSQL picks it as a deadlock victim or reports a
#: serialisation failure.
DEFAULT_ATTEMPTS = 4
BUSY_MESSAGE = "another booking is in progress"
BUSY_HINT = "try again in a moment"


def _sqlite_pragmas(dbapi_conn, _record, *, busy_ms: int = int(DEFAULT_LOCK_TIMEOUT * 1000)) -> None:
    # Let SQLAlchemy's "begin" event issue BEGIN IMMEDIATE itself.
    dbapi_conn.isolation_level = None
    cur = dbapi_conn.cursor()
    cur.execute("PRAGMA foreign_keys=ON")
    cur.execute(f"PRAGMA busy_timeout={int(busy_ms)}")
    try:
        cur.execute("PRAGMA journal_mode=WAL")
    except Exception:  # in-memory databases have no WAL; that is fine
        pass
    cur.close()


#: Execution option marking a read-only connection (see :func:`read_transaction`).
READ_ONLY = "inventory_read_only"


def _sqlite_begin(conn) -> None:
    # Writers take the write lock at BEGIN, so two writers serialise instead of failing
    # half-way; readers begin DEFERRED and, in WAL mode, read a snapshot without blocking
    # a writer or being blocked by one.
    if conn.get_execution_options().get(READ_ONLY):
        conn.exec_driver_sql("BEGIN DEFERRED")
    else:
        conn.exec_driver_sql("BEGIN IMMEDIATE")


_engines: dict[str, Engine] = {}


_last_url: str | None = None
T = TypeVar("T")


def make_engine(url: str | None = None, *, fresh: bool = False,
                timeout: float | None = None) -> Engine:
    """Build (or reuse) the engine for ``url``; writes wait at most ``timeout`` seconds
    (default :func:`lock_timeout`) for another writer's lock."""
    global _last_url
    url = resolve_url(url)
    _last_url = url
    wait = lock_timeout(timeout)
    if not fresh and url in _engines:
        return _engines[url]
    parsed = make_url(url)
    if parsed.get_backend_name() == "sqlite":
        db = parsed.database
        if db and db != ":memory:":
            parent = Path(db).expanduser().resolve().parent
            if not parent.exists():
                raise InventoryError(
                    f"folder {parent} for the database file does not exist",
                    hint="create the folder or give another --db path",
                )
        engine = create_engine(url, connect_args={"timeout": wait})
        event.listen(engine, "connect",
                     lambda c, r: _sqlite_pragmas(c, r, busy_ms=int(wait * 1000)))
        event.listen(engine, "begin", _sqlite_begin)
    else:
        ms = max(1, int(wait * 1000))
        engine = create_engine(url, pool_pre_ping=True, connect_args={
            "options": f"-c lock_timeout={ms} -c deadlock_timeout={min(ms, 1000)}",
            "connect_timeout": max(1, int(wait))})
    _engines[url] = engine
    return engine


def dispose_all() -> None:
    for engine in _engines.values():
        engine.dispose()
    _engines.clear()


@contextmanager
def transaction(engine: Engine) -> Iterator[Session]:
    """One unit of work: commit on success, roll back everything on any error. (The CLI's
    top-level handler turns database failures into one line with :func:`explain`.)"""
    with Session(engine, expire_on_commit=False) as session:
        try:
            yield session
            session.commit()
        except BaseException:
            session.rollback()
            raise


def read_only(engine: Engine) -> Engine:
    """``engine`` for reads only: SQLite ``BEGIN DEFERRED``, PostgreSQL ``REPEATABLE READ
    READ ONLY``."""
    if engine.dialect.name == "postgresql":
        return engine.execution_options(**{READ_ONLY: True}, isolation_level="REPEATABLE READ",
                                        postgresql_readonly=True)
    return engine.execution_options(**{READ_ONLY: True})


@contextmanager
def read_transaction(engine: Engine) -> Iterator[Session]:
    """A read-only unit of work for reports and lookups: it never takes the write lock, so a
    month-end report does not hold up a booking at the bench.

    SQLite: ``BEGIN DEFERRED`` (WAL: a consistent snapshot from the first read, writers go
    on). PostgreSQL: ``REPEATABLE READ READ ONLY`` (one snapshot for the whole report, and a
    write by mistake is refused). It always ends with a rollback: nothing is written."""
    with Session(read_only(engine), expire_on_commit=False) as session:
        try:
            yield session
        finally:
            session.rollback()


def run_transaction(engine: Engine, work: Callable[[Session], T], *,
                    attempts: int = DEFAULT_ATTEMPTS) -> T:
    """Run ``work(session)`` in one transaction; when PostgreSQL reports a deadlock or a
    serialisation failure, roll back and run it again (at most ``attempts`` times in all,
    with a short random pause). Anything else, or the last failure, is raised as
    :func:`transaction` raises it."""
    if attempts < 1:
        raise ValueError(f"attempts must be 1 or more, got {attempts}")
    for attempt in range(1, attempts + 1):
        try:
            with transaction(engine) as session:
                return work(session)
        except sa_exc.DBAPIError as exc:
            if not _retryable(exc):
                raise
            if attempt == attempts:
                raise InventoryError(
                    f"{BUSY_MESSAGE} on the same stock; gave up after {attempts} attempts",
                    kind="busy", hint=BUSY_HINT) from exc
            time.sleep(random.uniform(0.01, 0.05) * attempt)
    raise AssertionError("unreachable")  # pragma: no cover


_RETRIED_IN = "inventory.retry_deadlocks"


def retry_deadlocks(fn: Callable[..., T]) -> Callable[..., T]:
    """Decorate a ledger operation ``fn(session, ...)``: on PostgreSQL it runs inside a
    savepoint, and when the database picks it as a deadlock victim (or reports a
    serialisation failure) the savepoint is rolled back, releasing the locks the operation
    took, and the operation runs again, at most :data:`DEFAULT_ATTEMPTS` times in all. The
    caller's transaction and everything it did before stay as they were. On SQLite (writers
    serialised by ``BEGIN IMMEDIATE``) the operation runs as it is.

    Only the first such operation of a transaction gets the savepoint: a bulk writer that
    books thousands of movements in one transaction would otherwise open thousands of
    subtransactions, which slows every other session's snapshots on PostgreSQL (past 64
    per transaction a backend's subtransaction cache overflows). A deadlock later in a
    bulk transaction ends it with the one-line "another booking is in progress"."""

    @functools.wraps(fn)
    def wrapper(session: Session, *args, **kwargs):
        if session.get_bind().dialect.name != "postgresql" or session.in_nested_transaction():
            return fn(session, *args, **kwargs)
        root = session.get_transaction()
        if root is not None and session.info.get(_RETRIED_IN) is root:
            return fn(session, *args, **kwargs)
        for attempt in range(1, DEFAULT_ATTEMPTS + 1):
            savepoint = session.begin_nested()
            session.info[_RETRIED_IN] = session.get_transaction()
            try:
                out = fn(session, *args, **kwargs)
            except sa_exc.DBAPIError as exc:
                savepoint.rollback()
                if not _retryable(exc) or attempt == DEFAULT_ATTEMPTS:
                    raise
                time.sleep(random.uniform(0.01, 0.05) * attempt)
                continue
            except BaseException:
                if savepoint.is_active:
                    savepoint.rollback()
                raise
            savepoint.commit()
            return out
        raise AssertionError("unreachable")  # pragma: no cover

    return wrapper


def _sqlstate(exc: BaseException) -> str | None:
    orig = getattr(exc, "orig", exc)
    return getattr(orig, "sqlstate", None) or getattr(orig, "pgcode", None)


def _retryable(exc: BaseException) -> bool:
    """A deadlock victim (40P01) or serialisation failure (40001): safe to run again."""
    return _sqlstate(exc) in ("40P01", "40001")


def _where(url) -> str:
    """The database as a person knows it: the SQLite file, or host/database."""
    if url is None:
        from inventory.core import sqlread

        url = _last_url or sqlread.last_url
    if url is None:
        return "the database"
    parsed = make_url(str(url)) if not hasattr(url, "get_backend_name") else url
    if parsed.get_backend_name() == "sqlite":
        return f"database file {parsed.database or ':memory:'}"
    host = parsed.host or "localhost"
    port = f":{parsed.port}" if parsed.port else ""
    return f"database {parsed.database} on {host}{port}"


_UNIQUE_SQLITE = re.compile(r"UNIQUE constraint failed: ([\w.]+(?:, [\w.]+)*)")
_CHECK_SQLITE = re.compile(r"CHECK constraint failed: (\w+)")


def _constraint(text: str, diag) -> str:
    """Table/columns or constraint named in an integrity error."""
    if diag is not None:
        parts = [p for p in (getattr(diag, "table_name", None),
                             getattr(diag, "constraint_name", None)) if p]
        detail = getattr(diag, "message_detail", None)
        where = " ".join(parts) if parts else ""
        return f"{where}{': ' + detail if detail else ''}".strip()
    m = _UNIQUE_SQLITE.search(text) or _CHECK_SQLITE.search(text)
    return m.group(1) if m else text.splitlines()[0]


def explain(exc: BaseException, url=None) -> InventoryError | None:
    """One actionable line for a database or file-system failure, or ``None`` when the
    failure is not one of these (a bug: the caller shows it as unexpected)."""
    if isinstance(exc, InventoryError):
        return exc
    where = _where(url)
    if isinstance(exc, sqlite3.Error) and not isinstance(exc, sa_exc.DBAPIError):
        # the plain reader (inventory.core.sqlread) uses the driver without SQLAlchemy
        exc = sa_exc.DBAPIError(None, None, exc)
    if isinstance(exc, sa_exc.DBAPIError):
        orig = exc.orig
        text = str(orig)
        low = text.lower()
        state = _sqlstate(exc)
        diag = getattr(orig, "diag", None)
        if state == "55P03" or "database is locked" in low or "database table is locked" in low:
            return InventoryError(f"{BUSY_MESSAGE} ({where} is locked by another writer)",
                                  kind="busy", hint=BUSY_HINT)
        if _retryable(exc):
            return InventoryError(f"{BUSY_MESSAGE} on the same stock ({where})", kind="busy",
                                  hint=BUSY_HINT)
        if state == "53100" or "disk is full" in low or "no space left" in low:
            return InventoryError(f"disk full: cannot write to {where}", kind="disk",
                                  hint="free some space and run the command again")
        if "readonly database" in low or "read-only" in low or state == "42501" \
                or "permission denied" in low:
            return InventoryError(f"permission denied: cannot write to {where}",
                                  kind="permission",
                                  hint="check the file and folder permissions, or the "
                                       "database user's rights")
        if "file is not a database" in low:
            return InventoryError(f"{where} is not a SQLite database", kind="invalid",
                                  hint="check the path given with --db or $INVENTORY_DB")
        if "unable to open database file" in low:
            return InventoryError(f"cannot open {where}", kind="permission",
                                  hint="check the path and the folder's permissions")
        if isinstance(exc, sa_exc.IntegrityError):
            return InventoryError(f"{where} refused the change: "
                                  f"{_constraint(text, diag)}", kind="conflict",
                                  hint="nothing was written; another user may have made "
                                       "the same change at the same moment")
        if isinstance(exc, sa_exc.DataError):
            col = getattr(diag, "column_name", None) if diag is not None else None
            first = (getattr(diag, "message_primary", None) if diag is not None else None) \
                or text.splitlines()[0]
            return InventoryError(f"{where} refused a value{' in ' + col if col else ''}: "
                                  f"{first}", kind="invalid")
        if isinstance(exc, sa_exc.OperationalError) and (
                state is None or state.startswith("08") or state in ("57P01", "57P03")):
            first = text.strip().splitlines()[0] if text.strip() else type(orig).__name__
            return InventoryError(f"cannot reach {where}: {first}", kind="connection",
                                  hint="check that the server is running and the URL "
                                       "(--db or $INVENTORY_DB)")
        return None
    if isinstance(exc, OSError) and exc.errno in (errno.ENOSPC, errno.EDQUOT, errno.EACCES,
                                                   errno.EPERM, errno.EROFS):
        target = exc.filename or "a file"
        if exc.errno in (errno.ENOSPC, errno.EDQUOT):
            return InventoryError(f"disk full: cannot write {target}", kind="disk",
                                  hint="free some space and run the command again")
        return InventoryError(f"permission denied: cannot write {target}", kind="permission",
                              hint="check the file and folder permissions")
    return None


def is_postgres(engine: Engine) -> bool:
    return engine.dialect.name == "postgresql"


def has_tables(engine: Engine) -> bool:
    return inspect(engine).has_table("part")
