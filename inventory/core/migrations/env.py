"""Alembic environment. Run through ``inventory.core.migrate`` (``inventory init``), which
passes the live connection in ``config.attributes["connection"]``."""

from alembic import context
from sqlmodel import SQLModel

import inventory.core.tables  # noqa: F401  (registers the tables)

config = context.config
target_metadata = SQLModel.metadata


def run_migrations_online() -> None:
    connection = config.attributes.get("connection")
    if connection is None:
        from inventory.core.db import make_engine

        with make_engine(config.get_main_option("sqlalchemy.url")).connect() as conn:
            _run(conn)
    else:
        _run(connection)


def _run(connection) -> None:
    context.configure(
        connection=connection,
        target_metadata=target_metadata,
        render_as_batch=connection.dialect.name == "sqlite",
        compare_type=True,
    )
    with context.begin_transaction():
        context.run_migrations()


if context.is_offline_mode():
    raise SystemExit("offline migrations are not supported; use `inventory init`")
run_migrations_online()
