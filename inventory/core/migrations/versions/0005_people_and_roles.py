"""people and roles

Revision ID: 0005
Revises: 0004
Create Date: 2026-12-04

Reserved for: users, roles, sessions, the person on each movement (web). Fill upgrade() and downgrade() in the same commit as the table changes.
"""
import sqlalchemy as sa  # noqa: F401
import sqlmodel  # noqa: F401
from alembic import op  # noqa: F401

revision = '0005'
down_revision = '0004'
branch_labels = None
depends_on = None


def upgrade() -> None:
    pass


def downgrade() -> None:
    pass
