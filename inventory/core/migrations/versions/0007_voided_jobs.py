"""voided jobs

Revision ID: 0007
Revises: 0006
Create Date: 2026-12-04

When and why a job was voided (``service_job.voided_at``, ``void_reason``), written by
``inventory stock void-job`` in the same transaction as the correction movements. A voided
job keeps its row (nothing is deleted) but leaves every job count: the forecast's jobs per
month, the installed base's visits and the month end's jobs.
"""
import sqlalchemy as sa
import sqlmodel
from alembic import op

revision = '0007'
down_revision = '0006'
branch_labels = None
depends_on = None


def upgrade() -> None:
    with op.batch_alter_table('service_job', schema=None) as batch_op:
        batch_op.add_column(sa.Column('voided_at', sqlmodel.sql.sqltypes.UTCDateTime(),
                                      nullable=True))
        batch_op.add_column(sa.Column('void_reason',
                                      sqlmodel.sql.sqltypes.AutoString(length=200),
                                      nullable=True))


def downgrade() -> None:
    with op.batch_alter_table('service_job', schema=None) as batch_op:
        batch_op.drop_column('void_reason')
        batch_op.drop_column('voided_at')
