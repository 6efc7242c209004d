"""people and roles

Revision ID: 0005
Revises: 0004
Create Date: 2026-12-04

The people who sign in to the web app (name, role, Argon2 hash, sign-in throttle). The
person on each movement is the existing ``movement.user`` column.
"""
import sqlalchemy as sa
import sqlmodel
from alembic import op

revision = '0005'
down_revision = '0004'
branch_labels = None
depends_on = None


def upgrade() -> None:
    op.create_table('person',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('name', sqlmodel.sql.sqltypes.AutoString(length=64), nullable=False),
    sa.Column('role', sqlmodel.sql.sqltypes.AutoString(length=16), nullable=False),
    sa.Column('password_hash', sqlmodel.sql.sqltypes.AutoString(length=200), nullable=False),
    sa.Column('active', sa.Boolean(), nullable=False),
    sa.Column('created', sqlmodel.sql.sqltypes.UTCDateTime(), nullable=False),
    sa.Column('failed_logins', sa.Integer(), nullable=False),
    sa.Column('locked_until', sqlmodel.sql.sqltypes.UTCDateTime(), nullable=True),
    sa.CheckConstraint("role IN ('technician', 'manager', 'admin')", name='ck_person_role'),
    sa.PrimaryKeyConstraint('id')
    )
    with op.batch_alter_table('person', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_person_name'), ['name'], unique=True)


def downgrade() -> None:
    with op.batch_alter_table('person', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_person_name'))
    op.drop_table('person')
