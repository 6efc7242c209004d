"""imported row keys

Revision ID: 0002
Revises: 0001
Create Date: 2026-12-02 05:01:13.277974
"""
import sqlalchemy as sa
import sqlmodel
from alembic import op

revision = '0002'
down_revision = '0001'
branch_labels = None
depends_on = None


def upgrade() -> None:
    op.create_table('imported_row',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('kind', sqlmodel.sql.sqltypes.AutoString(length=24), nullable=False),
    sa.Column('row_key', sqlmodel.sql.sqltypes.AutoString(length=64), nullable=False),
    sa.Column('batch_id', sa.Integer(), nullable=False),
    sa.ForeignKeyConstraint(['batch_id'], ['import_batch.id'], ),
    sa.PrimaryKeyConstraint('id'),
    sa.UniqueConstraint('kind', 'row_key', name='uq_imported_row')
    )
    with op.batch_alter_table('imported_row', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_imported_row_batch_id'), ['batch_id'], unique=False)




def downgrade() -> None:
    with op.batch_alter_table('imported_row', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_imported_row_batch_id'))

    op.drop_table('imported_row')

