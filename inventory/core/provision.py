"""Creating a PostgreSQL database that does not exist yet (``inventory init``).

A SQLite file is created by opening it; a PostgreSQL database must be created on the server
first. :func:`ensure_database` does that through the server's maintenance database
(``postgres``), or says in one line how to do it when this user may not."""

from __future__ import annotations

from sqlalchemy.engine import make_url

from inventory.core.db import resolve_url
from inventory.core.errors import InventoryError


def ensure_database(url: str | None) -> str | None:
    """Create the PostgreSQL database named in ``url`` when it is missing; return its name
    when created (``None`` when it existed or is not PostgreSQL)."""
    parsed = make_url(resolve_url(url))
    if parsed.get_backend_name() != "postgresql" or not parsed.database:
        return None
    import psycopg
    from psycopg import sql

    def dsn(db: str) -> str:
        return parsed.set(drivername="postgresql", database=db).render_as_string(
            hide_password=False)

    try:
        with psycopg.connect(dsn(parsed.database), connect_timeout=5):
            return None
    except psycopg.OperationalError as exc:
        if "does not exist" not in str(exc):
            return None  # unreachable server, bad password...: the engine reports it
    name = parsed.database
    how = (f"createdb -h {parsed.host or '127.0.0.1'} -p {parsed.port or 5432} "
           f"-U {parsed.username or 'postgres'} {name}")
    try:
        with psycopg.connect(dsn("postgres"), autocommit=True, connect_timeout=5) as conn:
            conn.execute(sql.SQL("CREATE DATABASE {}").format(sql.Identifier(name)))
    except psycopg.Error as exc:
        first = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
        raise InventoryError(f"database {name} does not exist and could not be created "
                             f"({first})", hint=f"ask the server's administrator, or run: {how}"
                             ) from None
    return name
