"""Alembic migrations: empty to head, the tables match the models, data survives a
downgrade and upgrade, and an out-of-date database is refused with the upgrade command."""

from __future__ import annotations

import pytest
from alembic.autogenerate import compare_metadata
from alembic.runtime.migration import MigrationContext
from sqlalchemy import text
from sqlmodel import Session, SQLModel

from inventory.core import migrate
from inventory.core.db import make_engine, transaction
from inventory.core.errors import InventoryError
from inventory.stock import ledger


def test_empty_to_head_matches_models(db_url):
    engine = make_engine(db_url, fresh=True)
    migrate.upgrade(engine)
    assert migrate.current_revision(engine) == migrate.head_revision(engine)
    with engine.connect() as conn:
        diff = compare_metadata(MigrationContext.configure(conn), SQLModel.metadata)
    assert diff == [], diff


def test_data_survives_downgrade_and_upgrade(store):
    with transaction(store) as s:
        ledger.receive(s, ledger.Receipt("OR-214", 7, "0.25", lot="L1", cured="2026Q1"))
    head = migrate.head_revision(store)
    # The chain's oldest revision is the base of this check: down one step (or to base when
    # the chain has one revision, which drops everything: then upgrade must recreate).
    from alembic.script import ScriptDirectory

    script = ScriptDirectory.from_config(migrate.alembic_config(store))
    revs = [r.revision for r in script.walk_revisions()]
    if len(revs) < 2:
        pytest.skip("only one revision: nothing to downgrade to while keeping data")
    migrate.downgrade(store, revs[1])
    migrate.upgrade(store)
    assert migrate.current_revision(store) == head
    with Session(store) as s:
        assert [ln.on_hand for ln in ledger.on_hand(s, part="OR-214")] == [7]


def test_out_of_date_database_names_the_upgrade_command(tmp_path):
    engine = make_engine(f"sqlite:///{tmp_path / 'old.db'}", fresh=True)
    with pytest.raises(InventoryError, match="has no inventory schema") as info:
        migrate.require_current(engine, "old.db")
    assert "inventory --db old.db init" in info.value.hint
    migrate.upgrade(engine)
    with engine.begin() as conn:
        conn.execute(text("UPDATE alembic_version SET version_num = '0000'"))
    with pytest.raises(InventoryError, match="revision 0000") as info:
        migrate.require_current(engine, "old.db")
    assert "init` to upgrade" in info.value.hint


def test_head_constant_is_alembics_head(tmp_path):
    # The cheap schema check compares the version row with migrate.HEAD_REVISION; Alembic's
    # own reading of the scripts is the oracle, so a new revision without the constant fails.
    engine = make_engine(f"sqlite:///{tmp_path / 'h.db'}")
    assert migrate.head_revision(engine) == migrate.HEAD_REVISION
