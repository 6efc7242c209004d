"""part dimension indexes

Revision ID: 0006
Revises: 0005
Create Date: 2026-12-04

Indexes on the part's inside and outside diameter, height and cross-section, and on its
standard size: ``inventory match`` asks the database for the parts within a few tolerances
of the readings and for the parts stocked as the standard sizes it shows
(inventory.bench.match_sql) instead of reading the whole catalog.
"""
from alembic import op

revision = '0006'
down_revision = '0005'
branch_labels = None
depends_on = None

COLUMNS = ('id_mm', 'od_mm', 'height_mm', 'cs_mm', 'standard')


def upgrade() -> None:
    with op.batch_alter_table('part', schema=None) as batch_op:
        for name in COLUMNS:
            batch_op.create_index(batch_op.f(f'ix_part_{name}'), [name], unique=False)


def downgrade() -> None:
    with op.batch_alter_table('part', schema=None) as batch_op:
        for name in COLUMNS:
            batch_op.drop_index(batch_op.f(f'ix_part_{name}'))
