"""concurrency and bounds

Revision ID: 0004
Revises: 0003
Create Date: 2026-12-04

Reserved for: lot code sequence, order-line locking, plan identity, movement reversals. Fill upgrade() and downgrade() in the same commit as the table changes.
"""
import sqlalchemy as sa  # noqa: F401
import sqlmodel  # noqa: F401
from alembic import op  # noqa: F401

revision = '0004'
down_revision = '0003'
branch_labels = None
depends_on = None


def upgrade() -> None:
    pass


def downgrade() -> None:
    pass
