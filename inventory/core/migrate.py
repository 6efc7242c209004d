"""Schema migrations: create or upgrade a database to the head revision, and refuse to work
on an out-of-date one with the one command that upgrades it.

Every command checks the schema before it works, so that check is cheap: one plain
``SELECT version_num FROM alembic_version`` compared with :data:`HEAD_REVISION` (a test keeps
the constant equal to Alembic's head). Alembic itself is imported only to migrate.
"""

from __future__ import annotations

from importlib import resources
from typing import TYPE_CHECKING

from inventory.core.errors import InventoryError

if TYPE_CHECKING:  # SQLAlchemy loads with the engine; the plain reader needs none of it
    from alembic.config import Config
    from sqlalchemy.engine import Engine

#: The newest revision in ``migrations/versions`` (tests/test_migrations.py checks it).
HEAD_REVISION = "0007"
VERSION_TABLE = "alembic_version"


def alembic_config(engine: Engine) -> Config:
    from alembic.config import Config

    cfg = Config()
    cfg.set_main_option("script_location", str(resources.files("inventory.core") / "migrations"))
    cfg.set_main_option("sqlalchemy.url", engine.url.render_as_string(hide_password=False))
    return cfg


def head_revision(engine: Engine) -> str:
    """The head revision as Alembic reads it from the migration scripts."""
    from alembic.script import ScriptDirectory

    head = ScriptDirectory.from_config(alembic_config(engine)).get_current_head()
    assert head is not None
    return head


def current_revision(engine: Engine) -> str | None:
    """The revision recorded in the database (None for a database without the schema)."""
    from sqlalchemy import inspect, text
    from sqlalchemy.exc import DBAPIError

    with engine.connect() as conn:
        if not inspect(conn).has_table(VERSION_TABLE):
            return None
        try:
            rows = conn.execute(text(f"SELECT version_num FROM {VERSION_TABLE}")).all()
        except DBAPIError:
            return None
    return rows[0][0] if len(rows) == 1 else None


def upgrade(engine: Engine, revision: str = "head") -> None:
    from alembic import command

    cfg = alembic_config(engine)
    with engine.begin() as conn:
        cfg.attributes["connection"] = conn
        command.upgrade(cfg, revision)


def downgrade(engine: Engine, revision: str) -> None:
    from alembic import command

    cfg = alembic_config(engine)
    with engine.begin() as conn:
        cfg.attributes["connection"] = conn
        command.downgrade(cfg, revision)


def require_current(engine: Engine, url_for_hint: str | None = None) -> None:
    """Raise unless the database is at the head revision."""
    problem = schema_problem(current_revision(engine),
                             engine.url.render_as_string(hide_password=True), url_for_hint)
    if problem is not None:
        raise problem


def schema_problem(current: str | None, shown_url: str,
                   url_for_hint: str | None = None) -> InventoryError | None:
    """The refusal for a database whose recorded revision is ``current`` (None: no schema),
    or None when it is the head revision (also used by :mod:`inventory.core.sqlread`)."""
    head = HEAD_REVISION
    if current == head:
        return None
    db = f" --db {url_for_hint}" if url_for_hint else ""
    if current is None:
        return InventoryError(
            f"database {shown_url} has no inventory schema",
            kind="schema",
            hint=f"run `inventory{db} init` to create it, or `inventory demo` for the demo shop",
        )
    return InventoryError(
        f"database schema is at revision {current}, this version of the tool needs {head}",
        kind="schema",
        hint=f"run `inventory{db} init` to upgrade it",
    )
