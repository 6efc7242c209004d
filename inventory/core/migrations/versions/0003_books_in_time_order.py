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
    op.create_table('month_close',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('month', sqlmodel.sql.sqltypes.AutoString(length=7), nullable=False),
    sa.Column('action', sqlmodel.sql.sqltypes.AutoString(length=8), nullable=False),
    sa.Column('ts', sqlmodel.sql.sqltypes.UTCDateTime(), nullable=False),
    sa.Column('user', sqlmodel.sql.sqltypes.AutoString(length=64), nullable=True),
    sa.Column('reason', sqlmodel.sql.sqltypes.AutoString(length=200), nullable=False),
    sa.Column('totals', sqlmodel.sql.sqltypes.AutoString(length=4000), nullable=False),
    sa.CheckConstraint("action IN ('close', 'reopen')", name='ck_month_close_action'),
    sa.PrimaryKeyConstraint('id')
    )
    with op.batch_alter_table('month_close', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_month_close_month'), ['month'], unique=False)

    with op.batch_alter_table('movement', schema=None) as batch_op:
        batch_op.add_column(sa.Column('reverses_id', sa.Integer(), nullable=True))
        batch_op.create_index(batch_op.f('ix_movement_reverses_id'), ['reverses_id'], unique=False)
        batch_op.create_foreign_key('fk_movement_reverses_id', 'movement', ['reverses_id'], ['id'])


def downgrade() -> None:
    with op.batch_alter_table('movement', schema=None) as batch_op:
        batch_op.drop_constraint('fk_movement_reverses_id', type_='foreignkey')
        batch_op.drop_index(batch_op.f('ix_movement_reverses_id'))
        batch_op.drop_column('reverses_id')

    with op.batch_alter_table('month_close', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_month_close_month'))

    op.drop_table('month_close')
