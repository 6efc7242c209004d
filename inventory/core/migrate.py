"""Schema migrations: create or upgrade a database to the head revision, and refuse to work
on an out-of-date one with the one command that upgrades it."""

from __future__ import annotations

from importlib import resources

from alembic import command
from alembic.config import Config
from alembic.runtime.migration import MigrationContext
from alembic.script import ScriptDirectory  # noqa: F401 (used by tests)
from sqlalchemy.engine import Engine

from inventory.core.errors import InventoryError


def alembic_config(engine: Engine) -> Config:
    cfg = Config()
    cfg.set_main_option("script_location", str(resources.files("inventory.core") / "migrations"))
    cfg.set_main_option("sqlalchemy.url", engine.url.render_as_string(hide_password=False))
    return cfg


def head_revision(engine: Engine) -> str:
    return ScriptDirectory.from_config(alembic_config(engine)).get_current_head()


def current_revision(engine: Engine) -> str | None:
    with engine.connect() as conn:
        return MigrationContext.configure(conn).get_current_revision()


def upgrade(engine: Engine, revision: str = "head") -> None:
    cfg = alembic_config(engine)
    with engine.begin() as conn:
        cfg.attributes["connection"] = conn
        command.upgrade(cfg, revision)


def downgrade(engine: Engine, revision: str) -> None:
    cfg = alembic_config(engine)
    with engine.begin() as conn:
        cfg.attributes["connection"] = conn
        command.downgrade(cfg, revision)


def require_current(engine: Engine, url_for_hint: str | None = None) -> None:
    """Raise unless the database is at the head revision."""
    current = current_revision(engine)
    head = head_revision(engine)
    if current == head:
        return
    db = f" --db {url_for_hint}" if url_for_hint else ""
    if current is None:
        raise InventoryError(
            f"database {engine.url.render_as_string(hide_password=True)} has no inventory schema",
            kind="schema",
            hint=f"run `inventory{db} init` to create it, or `inventory demo` for the demo shop",
        )
    raise InventoryError(
        f"database schema is at revision {current}, this version of the tool needs {head}",
        kind="schema",
        hint=f"run `inventory{db} init` to upgrade it",
    )
