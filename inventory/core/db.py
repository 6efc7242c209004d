"""Engine from a URL, transactions, and the schema-version check.

SQLite (the default, a file ``inventory.db`` in the working directory) runs in WAL mode with
foreign keys on; every transaction starts ``BEGIN IMMEDIATE`` so two writers serialise
instead of failing half-way. PostgreSQL is reached by URL (psycopg 3); writers lock the
balance rows they change (``SELECT ... FOR UPDATE``).
"""

from __future__ import annotations

import os
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

from sqlalchemy import event, inspect
from sqlalchemy.engine import Engine, make_url
from sqlmodel import Session, create_engine

from inventory.core.errors import InventoryError

DEFAULT_URL = "sqlite:///inventory.db"
ENV_VAR = "INVENTORY_DB"


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


def _sqlite_pragmas(dbapi_conn, _record) -> None:
    # Let SQLAlchemy's "begin" event issue BEGIN IMMEDIATE itself.
    dbapi_conn.isolation_level = None
    cur = dbapi_conn.cursor()
    cur.execute("PRAGMA foreign_keys=ON")
    cur.execute("PRAGMA busy_timeout=30000")
    try:
        cur.execute("PRAGMA journal_mode=WAL")
    except Exception:  # in-memory databases have no WAL; that is fine
        pass
    cur.close()


def _sqlite_begin(conn) -> None:
    conn.exec_driver_sql("BEGIN IMMEDIATE")


_engines: dict[str, Engine] = {}


def make_engine(url: str | None = None, *, fresh: bool = False) -> Engine:
    """Build (or reuse) the engine for ``url``."""
    url = resolve_url(url)
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
        engine = create_engine(url, connect_args={"timeout": 30})
        event.listen(engine, "connect", _sqlite_pragmas)
        event.listen(engine, "begin", _sqlite_begin)
    else:
        engine = create_engine(url, pool_pre_ping=True)
    _engines[url] = engine
    return engine


def dispose_all() -> None:
    for engine in _engines.values():
        engine.dispose()
    _engines.clear()


@contextmanager
def transaction(engine: Engine) -> Iterator[Session]:
    """One unit of work: commit on success, roll back everything on any error."""
    with Session(engine, expire_on_commit=False) as session:
        try:
            yield session
            session.commit()
        except BaseException:
            session.rollback()
            raise


def is_postgres(engine: Engine) -> bool:
    return engine.dialect.name == "postgresql"


def has_tables(engine: Engine) -> bool:
    return inspect(engine).has_table("part")
