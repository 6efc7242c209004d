"""books in time order

Revision ID: 0003
Revises: 0002
Create Date: 2026-12-04

Reserved for: closed months, returns and voids, storage-limit extensions (stock). Fill upgrade() and downgrade() in the same commit as the table changes.
"""
import sqlalchemy as sa  # noqa: F401
import sqlmodel  # noqa: F401
from alembic import op  # noqa: F401

revision = '0003'
down_revision = '0002'
branch_labels = None
depends_on = None


def upgrade() -> None:
    pass


def downgrade() -> None:
    pass
