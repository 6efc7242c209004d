"""A consistent copy of a SQLite database while others keep writing, through SQLite's online
backup API (``sqlite3.Connection.backup``): the copy is one committed state of the whole
database, written beside the target and moved into place only once complete and checked.
PostgreSQL is backed up with its own tool, ``pg_dump`` (see the README)."""

from __future__ import annotations

import os
import sqlite3
from pathlib import Path

from sqlalchemy.engine import make_url

from inventory.core.errors import InventoryError


def backup_sqlite(url: str, target: str | Path, *, replace: bool = False) -> Path:
    parsed = make_url(url)
    target = Path(target)
    if parsed.get_backend_name() != "sqlite":
        db = parsed.database or "DBNAME"
        raise InventoryError(
            f"backup copies SQLite databases; {parsed.render_as_string(hide_password=True)} is "
            f"PostgreSQL", hint=f"use pg_dump: pg_dump -Fc -h {parsed.host or '127.0.0.1'} "
            f"-U {parsed.username or 'postgres'} -f {target} {db}")
    source = Path(parsed.database or "")
    if not source.is_file():
        raise InventoryError(f"no database file {source}")
    if target.exists() and not replace:
        raise InventoryError(f"{target} already exists", hint="give a new file name, or "
                             "--replace to overwrite it")
    if not target.parent.is_dir():
        raise InventoryError(f"folder {target.parent} does not exist")
    if target.resolve() == source.resolve():
        raise InventoryError(f"{target} is the database itself: give another file")
    part = target.with_name(target.name + ".part")
    src = sqlite3.connect(f"file:{source}?mode=ro", uri=True, timeout=30)
    try:
        dst = sqlite3.connect(part)
        try:
            src.backup(dst, pages=1024)  # other writers may go on between steps
            ok = dst.execute("PRAGMA integrity_check").fetchone()[0]
        finally:
            dst.close()
    except sqlite3.Error as exc:
        part.unlink(missing_ok=True)
        raise InventoryError(f"cannot back up {source} to {target}: {exc}") from None
    finally:
        src.close()
    if ok != "ok":
        part.unlink(missing_ok=True)
        raise InventoryError(f"the copy of {source} failed its integrity check: {ok}")
    os.replace(part, target)
    return target
