"""concurrency and bounds

Revision ID: 0004
Revises: 0003
Create Date: 2026-12-04

Plan identity: ``recorded_plan`` keeps each plan recorded as purchase orders by a unique
hash of its date and lines. (Lot codes need no table: they are chosen under a per-part
advisory lock on PostgreSQL; order lines are locked with SELECT ... FOR UPDATE.)
"""
import sqlalchemy as sa
import sqlmodel
from alembic import op

revision = '0004'
down_revision = '0003'
branch_labels = None
depends_on = None


def upgrade() -> None:
    op.create_table('recorded_plan',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('identity', sqlmodel.sql.sqltypes.AutoString(length=64), nullable=False),
    sa.Column('filename', sqlmodel.sql.sqltypes.AutoString(length=255), nullable=False),
    sa.Column('recorded_at', sqlmodel.sql.sqltypes.UTCDateTime(), nullable=False),
    sa.Column('orders', sqlmodel.sql.sqltypes.AutoString(length=2000), nullable=False),
    sa.PrimaryKeyConstraint('id'),
    sa.UniqueConstraint('identity', name='uq_recorded_plan')
    )


def downgrade() -> None:
    op.drop_table('recorded_plan')
