"""Bulk writes and look-ups for the many-rows paths (the history import, the many-jobs
writer): rows in through the driver's executemany (COPY on PostgreSQL), which values a
column already holds, and fresh planner statistics after a bulk write."""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from datetime import datetime
from typing import Any
from zoneinfo import ZoneInfo

from sqlalchemy import DateTime
from sqlmodel import Session, select


def bulk_insert(session: Session, table, rows: Sequence[dict], *, ids: bool = False
                ) -> list[int]:
    """INSERT many rows through the driver's executemany, in the caller's transaction.

    SQLAlchemy's own executemany builds parameters row by row in Python, which costs more
    than the database's work on 100,000 rows. Values still go through each column's type
    (the bind processors SQLAlchemy would apply), so they are stored exactly as the ORM
    stores them. With ``ids=True`` the primary keys are reserved first (from the sequence on
    PostgreSQL; after the largest id on SQLite, whose write transaction is exclusive) and
    returned in row order.
    """
    if not rows:
        return []
    conn = session.connection()
    dialect = conn.dialect
    names = list(rows[0])
    new_ids: list[int] = []
    if ids:
        new_ids = _reserve_ids(session, table, len(rows))
        names = ["id", *names]
    quote = dialect.identifier_preparer.quote
    procs = [table.c[n].type.dialect_impl(dialect).bind_processor(dialect) for n in names]
    columns: list[Any] = [new_ids] if ids else []
    columns += [[row[n] for row in rows] for n in names[1 if ids else 0:]]
    if dialect.name == "postgresql":
        procs = [_pg_timestamp(conn) if isinstance(table.c[n].type, DateTime)
                 and not table.c[n].type.timezone else p
                 for n, p in zip(names, procs, strict=True)]
    for j, proc in enumerate(procs):
        if proc is None:
            continue
        done: dict[Any, Any] = {}  # values repeat (a day, a cost): convert each once
        columns[j] = [None if v is None else done[v] if v in done else
                      done.setdefault(v, proc(v)) for v in columns[j]]
    cols = ", ".join(quote(n) for n in names)
    if dialect.name == "postgresql":
        # COPY: the fastest way in; the same checks (constraints, keys) apply as to INSERT
        raw = conn.connection.driver_connection
        with raw.cursor() as cur, cur.copy(f"COPY {quote(table.name)} ({cols}) FROM STDIN") as cp:
            for row in zip(*columns, strict=True):
                cp.write_row(row)
        return new_ids
    mark = "?" if dialect.paramstyle == "qmark" else "%s"
    sql = f"INSERT INTO {quote(table.name)} ({cols}) VALUES ({', '.join([mark] * len(names))})"
    conn.exec_driver_sql(sql, list(zip(*columns, strict=True)))
    return new_ids


def _pg_timestamp(conn):
    """What PostgreSQL stores for an aware date-time in a ``timestamp`` (without time zone)
    column on INSERT: the wall time in the session's time zone. COPY would drop the offset
    instead, so convert. (``timestamptz`` columns take the aware value as it is.)"""
    zone = ZoneInfo(conn.exec_driver_sql("SHOW TimeZone").scalar())

    def convert(v: datetime) -> datetime:
        return v.astimezone(zone).replace(tzinfo=None) if v.tzinfo is not None else v
    return convert


def _reserve_ids(session: Session, table, n: int) -> list[int]:
    conn = session.connection()
    if conn.dialect.name == "postgresql":
        return [r[0] for r in conn.exec_driver_sql(
            f"SELECT nextval(pg_get_serial_sequence('{table.name}', 'id')) "
            f"FROM generate_series(1, {int(n)})")]
    top = conn.exec_driver_sql(f"SELECT coalesce(max(id), 0) FROM {table.name}").scalar()
    return list(range(top + 1, top + 1 + n))


def present(session: Session, column, values: Iterable[Any], *where: Any,
            all_above: int = 2000) -> set:
    """Which of ``values`` the column holds (rows also matching ``where``). Few values are
    asked in chunks of 500; more than ``all_above`` read the column once and compare here,
    which stays linear whatever plan the database picks for long IN lists."""
    wanted = list(dict.fromkeys(values))
    if not wanted:
        return set()
    if len(wanted) > all_above:
        return set(session.exec(select(column).where(*where))) & set(wanted)
    found: set = set()
    for i in range(0, len(wanted), 500):
        found.update(session.exec(select(column).where(*where, column.in_(wanted[i:i + 500]))))
    return found


def analyze(session: Session, *tables: str) -> None:
    """Refresh PostgreSQL's planner statistics after a bulk write, so the next queries on
    these tables (a re-run of the same import) are planned for their real size."""
    if session.get_bind().dialect.name == "postgresql" and tables:
        session.connection().exec_driver_sql(f"ANALYZE {', '.join(tables)}")
