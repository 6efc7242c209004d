"""initial schema

Revision ID: 0001
Revises:
Create Date: 2026-12-02 04:56:04.835367
"""
import sqlalchemy as sa
import sqlmodel
from alembic import op

revision = '0001'
down_revision = None
branch_labels = None
depends_on = None


def upgrade() -> None:
    op.create_table('fork_family',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('code', sqlmodel.sql.sqltypes.AutoString(length=32), nullable=False),
    sa.Column('description', sqlmodel.sql.sqltypes.AutoString(length=200), nullable=False),
    sa.Column('stanchion_mm', sa.Float(), nullable=False),
    sa.Column('travel_min_mm', sa.Integer(), nullable=False),
    sa.Column('travel_max_mm', sa.Integer(), nullable=False),
    sa.Column('spring', sqlmodel.sql.sqltypes.AutoString(length=24), nullable=False),
    sa.Column('year_from', sa.Integer(), nullable=False),
    sa.Column('year_to', sa.Integer(), nullable=True),
    sa.PrimaryKeyConstraint('id')
    )
    with op.batch_alter_table('fork_family', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_fork_family_code'), ['code'], unique=True)

    op.create_table('import_batch',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('kind', sqlmodel.sql.sqltypes.AutoString(length=24), nullable=False),
    sa.Column('fingerprint', sqlmodel.sql.sqltypes.AutoString(length=64), nullable=False),
    sa.Column('filename', sqlmodel.sql.sqltypes.AutoString(length=255), nullable=False),
    sa.Column('rows', sa.Integer(), nullable=False),
    sa.Column('applied_at', sqlmodel.sql.sqltypes.UTCDateTime(), nullable=False),
    sa.PrimaryKeyConstraint('id')
    )
    with op.batch_alter_table('import_batch', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_import_batch_fingerprint'), ['fingerprint'], unique=False)

    op.create_table('location',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('code', sqlmodel.sql.sqltypes.AutoString(length=32), nullable=False),
    sa.Column('description', sqlmodel.sql.sqltypes.AutoString(length=200), nullable=False),
    sa.PrimaryKeyConstraint('id')
    )
    with op.batch_alter_table('location', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_location_code'), ['code'], unique=True)

    op.create_table('part',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('code', sqlmodel.sql.sqltypes.AutoString(length=64), nullable=False),
    sa.Column('kind', sqlmodel.sql.sqltypes.AutoString(length=32), nullable=False),
    sa.Column('description', sqlmodel.sql.sqltypes.AutoString(length=200), nullable=False),
    sa.Column('id_mm', sa.Float(), nullable=True),
    sa.Column('od_mm', sa.Float(), nullable=True),
    sa.Column('height_mm', sa.Float(), nullable=True),
    sa.Column('cs_mm', sa.Float(), nullable=True),
    sa.Column('material', sqlmodel.sql.sqltypes.AutoString(length=16), nullable=True),
    sa.Column('hardness', sa.Integer(), nullable=True),
    sa.Column('volume_cm3', sa.Float(), nullable=True),
    sa.Column('unit', sqlmodel.sql.sqltypes.AutoString(length=8), nullable=False),
    sa.Column('standard', sqlmodel.sql.sqltypes.AutoString(length=48), nullable=True),
    sa.Column('notes', sqlmodel.sql.sqltypes.AutoString(length=400), nullable=False),
    sa.PrimaryKeyConstraint('id')
    )
    with op.batch_alter_table('part', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_part_code'), ['code'], unique=True)
        batch_op.create_index(batch_op.f('ix_part_kind'), ['kind'], unique=False)

    op.create_table('supplier',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('code', sqlmodel.sql.sqltypes.AutoString(length=32), nullable=False),
    sa.Column('name', sqlmodel.sql.sqltypes.AutoString(length=120), nullable=False),
    sa.Column('lead_time_days', sa.Integer(), nullable=False),
    sa.Column('lead_time_sd_days', sa.Float(), nullable=False),
    sa.Column('min_order_value', sa.Numeric(precision=12, scale=4), nullable=False),
    sa.Column('order_cycle_days', sa.Integer(), nullable=False),
    sa.Column('currency', sqlmodel.sql.sqltypes.AutoString(length=3), nullable=False),
    sa.PrimaryKeyConstraint('id')
    )
    with op.batch_alter_table('supplier', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_supplier_code'), ['code'], unique=True)

    op.create_table('fork_alias',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('text', sqlmodel.sql.sqltypes.AutoString(length=200), nullable=False),
    sa.Column('fork_family_id', sa.Integer(), nullable=False),
    sa.ForeignKeyConstraint(['fork_family_id'], ['fork_family.id'], ),
    sa.PrimaryKeyConstraint('id')
    )
    with op.batch_alter_table('fork_alias', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_fork_alias_text'), ['text'], unique=True)

    op.create_table('kit',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('part_id', sa.Integer(), nullable=False),
    sa.Column('fork_family_id', sa.Integer(), nullable=False),
    sa.Column('service_level', sqlmodel.sql.sqltypes.AutoString(length=24), nullable=False),
    sa.Column('description', sqlmodel.sql.sqltypes.AutoString(length=200), nullable=False),
    sa.ForeignKeyConstraint(['fork_family_id'], ['fork_family.id'], ),
    sa.ForeignKeyConstraint(['part_id'], ['part.id'], ),
    sa.PrimaryKeyConstraint('id'),
    sa.UniqueConstraint('part_id')
    )
    with op.batch_alter_table('kit', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_kit_fork_family_id'), ['fork_family_id'], unique=False)

    op.create_table('lot',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('part_id', sa.Integer(), nullable=False),
    sa.Column('code', sqlmodel.sql.sqltypes.AutoString(length=48), nullable=False),
    sa.Column('cured', sqlmodel.sql.sqltypes.AutoString(length=6), nullable=True),
    sa.Column('received', sa.Date(), nullable=False),
    sa.Column('unit_cost', sa.Numeric(precision=12, scale=4), nullable=False),
    sa.Column('supplier_id', sa.Integer(), nullable=True),
    sa.Column('extended_until', sa.Date(), nullable=True),
    sa.ForeignKeyConstraint(['part_id'], ['part.id'], ),
    sa.ForeignKeyConstraint(['supplier_id'], ['supplier.id'], ),
    sa.PrimaryKeyConstraint('id'),
    sa.UniqueConstraint('part_id', 'code', name='uq_lot')
    )
    with op.batch_alter_table('lot', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_lot_part_id'), ['part_id'], unique=False)

    op.create_table('purchase_order',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('ref', sqlmodel.sql.sqltypes.AutoString(length=32), nullable=False),
    sa.Column('supplier_id', sa.Integer(), nullable=False),
    sa.Column('created', sa.Date(), nullable=False),
    sa.Column('order_by', sa.Date(), nullable=True),
    sa.Column('expected', sa.Date(), nullable=True),
    sa.Column('status', sqlmodel.sql.sqltypes.AutoString(length=16), nullable=False),
    sa.ForeignKeyConstraint(['supplier_id'], ['supplier.id'], ),
    sa.PrimaryKeyConstraint('id')
    )
    with op.batch_alter_table('purchase_order', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_purchase_order_ref'), ['ref'], unique=True)
        batch_op.create_index(batch_op.f('ix_purchase_order_supplier_id'), ['supplier_id'], unique=False)

    op.create_table('seat',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('fork_family_id', sa.Integer(), nullable=False),
    sa.Column('code', sqlmodel.sql.sqltypes.AutoString(length=48), nullable=False),
    sa.Column('position', sqlmodel.sql.sqltypes.AutoString(length=32), nullable=False),
    sa.Column('part_kind', sqlmodel.sql.sqltypes.AutoString(length=32), nullable=False),
    sa.Column('gland', sqlmodel.sql.sqltypes.AutoString(length=16), nullable=False),
    sa.Column('motion', sqlmodel.sql.sqltypes.AutoString(length=16), nullable=False),
    sa.Column('medium', sqlmodel.sql.sqltypes.AutoString(length=16), nullable=False),
    sa.Column('qty_per_fork', sa.Integer(), nullable=False),
    sa.Column('rod_mm', sa.Float(), nullable=True),
    sa.Column('bore_mm', sa.Float(), nullable=True),
    sa.Column('groove_mm', sa.Float(), nullable=True),
    sa.Column('groove_width_mm', sa.Float(), nullable=True),
    sa.Column('housing_depth_mm', sa.Float(), nullable=True),
    sa.Column('rod_fit', sqlmodel.sql.sqltypes.AutoString(length=8), nullable=True),
    sa.Column('bore_fit', sqlmodel.sql.sqltypes.AutoString(length=8), nullable=True),
    sa.Column('chamber_volume_cm3', sa.Float(), nullable=True),
    sa.Column('piston_mm', sa.Float(), nullable=True),
    sa.Column('travel_mm', sa.Float(), nullable=True),
    sa.Column('set_pressure_bar', sa.Float(), nullable=True),
    sa.Column('notes', sqlmodel.sql.sqltypes.AutoString(length=400), nullable=False),
    sa.ForeignKeyConstraint(['fork_family_id'], ['fork_family.id'], ),
    sa.PrimaryKeyConstraint('id'),
    sa.UniqueConstraint('fork_family_id', 'code', name='uq_seat')
    )
    with op.batch_alter_table('seat', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_seat_fork_family_id'), ['fork_family_id'], unique=False)

    op.create_table('service_job',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('ref', sqlmodel.sql.sqltypes.AutoString(length=32), nullable=False),
    sa.Column('day', sa.Date(), nullable=False),
    sa.Column('fork_family_id', sa.Integer(), nullable=False),
    sa.Column('service_level', sqlmodel.sql.sqltypes.AutoString(length=24), nullable=False),
    sa.Column('ride_hours', sa.Integer(), nullable=True),
    sa.Column('fork_ref', sqlmodel.sql.sqltypes.AutoString(length=32), nullable=True),
    sa.Column('batch_id', sa.Integer(), nullable=True),
    sa.ForeignKeyConstraint(['batch_id'], ['import_batch.id'], ),
    sa.ForeignKeyConstraint(['fork_family_id'], ['fork_family.id'], ),
    sa.PrimaryKeyConstraint('id')
    )
    with op.batch_alter_table('service_job', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_service_job_day'), ['day'], unique=False)
        batch_op.create_index(batch_op.f('ix_service_job_fork_family_id'), ['fork_family_id'], unique=False)
        batch_op.create_index(batch_op.f('ix_service_job_fork_ref'), ['fork_ref'], unique=False)
        batch_op.create_index(batch_op.f('ix_service_job_ref'), ['ref'], unique=True)

    op.create_table('supplier_item',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('supplier_id', sa.Integer(), nullable=False),
    sa.Column('part_id', sa.Integer(), nullable=False),
    sa.Column('supplier_code', sqlmodel.sql.sqltypes.AutoString(length=64), nullable=False),
    sa.Column('unit_cost', sa.Numeric(precision=12, scale=4), nullable=False),
    sa.Column('pack_size', sa.Integer(), nullable=False),
    sa.Column('min_order_qty', sa.Integer(), nullable=False),
    sa.Column('lead_time_days', sa.Integer(), nullable=True),
    sa.CheckConstraint('min_order_qty >= 0', name='ck_supplier_item_moq'),
    sa.CheckConstraint('pack_size >= 1', name='ck_supplier_item_pack'),
    sa.ForeignKeyConstraint(['part_id'], ['part.id'], ),
    sa.ForeignKeyConstraint(['supplier_id'], ['supplier.id'], ),
    sa.PrimaryKeyConstraint('id'),
    sa.UniqueConstraint('supplier_id', 'part_id', name='uq_supplier_item')
    )
    with op.batch_alter_table('supplier_item', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_supplier_item_part_id'), ['part_id'], unique=False)
        batch_op.create_index(batch_op.f('ix_supplier_item_supplier_id'), ['supplier_id'], unique=False)

    op.create_table('job_line',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('job_id', sa.Integer(), nullable=False),
    sa.Column('part_id', sa.Integer(), nullable=False),
    sa.Column('qty', sa.Integer(), nullable=False),
    sa.CheckConstraint('qty > 0', name='ck_job_line_qty'),
    sa.ForeignKeyConstraint(['job_id'], ['service_job.id'], ),
    sa.ForeignKeyConstraint(['part_id'], ['part.id'], ),
    sa.PrimaryKeyConstraint('id')
    )
    with op.batch_alter_table('job_line', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_job_line_job_id'), ['job_id'], unique=False)
        batch_op.create_index(batch_op.f('ix_job_line_part_id'), ['part_id'], unique=False)

    op.create_table('kit_line',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('kit_id', sa.Integer(), nullable=False),
    sa.Column('part_id', sa.Integer(), nullable=False),
    sa.Column('qty', sa.Integer(), nullable=False),
    sa.CheckConstraint('qty > 0', name='ck_kit_line_qty'),
    sa.ForeignKeyConstraint(['kit_id'], ['kit.id'], ),
    sa.ForeignKeyConstraint(['part_id'], ['part.id'], ),
    sa.PrimaryKeyConstraint('id'),
    sa.UniqueConstraint('kit_id', 'part_id', name='uq_kit_line')
    )
    with op.batch_alter_table('kit_line', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_kit_line_kit_id'), ['kit_id'], unique=False)
        batch_op.create_index(batch_op.f('ix_kit_line_part_id'), ['part_id'], unique=False)

    op.create_table('movement',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('ts', sqlmodel.sql.sqltypes.UTCDateTime(), nullable=False),
    sa.Column('part_id', sa.Integer(), nullable=False),
    sa.Column('location_id', sa.Integer(), nullable=False),
    sa.Column('lot_id', sa.Integer(), nullable=False),
    sa.Column('qty', sa.Integer(), nullable=False),
    sa.Column('kind', sqlmodel.sql.sqltypes.AutoString(length=16), nullable=False),
    sa.Column('unit_cost', sa.Numeric(precision=12, scale=4), nullable=False),
    sa.Column('reference', sqlmodel.sql.sqltypes.AutoString(length=64), nullable=True),
    sa.Column('reason', sqlmodel.sql.sqltypes.AutoString(length=200), nullable=True),
    sa.Column('user', sqlmodel.sql.sqltypes.AutoString(length=64), nullable=True),
    sa.Column('batch_id', sa.Integer(), nullable=True),
    sa.CheckConstraint('qty <> 0', name='ck_movement_nonzero'),
    sa.ForeignKeyConstraint(['batch_id'], ['import_batch.id'], ),
    sa.ForeignKeyConstraint(['location_id'], ['location.id'], ),
    sa.ForeignKeyConstraint(['lot_id'], ['lot.id'], ),
    sa.ForeignKeyConstraint(['part_id'], ['part.id'], ),
    sa.PrimaryKeyConstraint('id')
    )
    with op.batch_alter_table('movement', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_movement_kind'), ['kind'], unique=False)
        batch_op.create_index(batch_op.f('ix_movement_location_id'), ['location_id'], unique=False)
        batch_op.create_index(batch_op.f('ix_movement_lot_id'), ['lot_id'], unique=False)
        batch_op.create_index('ix_movement_part_ts', ['part_id', 'ts'], unique=False)
        batch_op.create_index(batch_op.f('ix_movement_reference'), ['reference'], unique=False)
        batch_op.create_index(batch_op.f('ix_movement_ts'), ['ts'], unique=False)

    op.create_table('purchase_order_line',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('order_id', sa.Integer(), nullable=False),
    sa.Column('part_id', sa.Integer(), nullable=False),
    sa.Column('qty', sa.Integer(), nullable=False),
    sa.Column('received_qty', sa.Integer(), nullable=False),
    sa.Column('unit_cost', sa.Numeric(precision=12, scale=4), nullable=False),
    sa.Column('reason', sqlmodel.sql.sqltypes.AutoString(length=400), nullable=False),
    sa.CheckConstraint('qty > 0', name='ck_po_line_qty'),
    sa.CheckConstraint('received_qty >= 0', name='ck_po_line_received'),
    sa.ForeignKeyConstraint(['order_id'], ['purchase_order.id'], ),
    sa.ForeignKeyConstraint(['part_id'], ['part.id'], ),
    sa.PrimaryKeyConstraint('id'),
    sa.UniqueConstraint('order_id', 'part_id', name='uq_po_line')
    )
    with op.batch_alter_table('purchase_order_line', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_purchase_order_line_order_id'), ['order_id'], unique=False)
        batch_op.create_index(batch_op.f('ix_purchase_order_line_part_id'), ['part_id'], unique=False)

    op.create_table('stock_balance',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('part_id', sa.Integer(), nullable=False),
    sa.Column('location_id', sa.Integer(), nullable=False),
    sa.Column('lot_id', sa.Integer(), nullable=False),
    sa.Column('qty', sa.Integer(), nullable=False),
    sa.CheckConstraint('qty >= 0', name='ck_stock_balance_nonnegative'),
    sa.ForeignKeyConstraint(['location_id'], ['location.id'], ),
    sa.ForeignKeyConstraint(['lot_id'], ['lot.id'], ),
    sa.ForeignKeyConstraint(['part_id'], ['part.id'], ),
    sa.PrimaryKeyConstraint('id'),
    sa.UniqueConstraint('part_id', 'location_id', 'lot_id', name='uq_stock_balance')
    )
    with op.batch_alter_table('stock_balance', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_stock_balance_part_id'), ['part_id'], unique=False)

    op.create_table('substitution_note',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('seat_id', sa.Integer(), nullable=False),
    sa.Column('part_id', sa.Integer(), nullable=False),
    sa.Column('ts', sqlmodel.sql.sqltypes.UTCDateTime(), nullable=False),
    sa.Column('user', sqlmodel.sql.sqltypes.AutoString(length=64), nullable=True),
    sa.Column('outcome', sqlmodel.sql.sqltypes.AutoString(length=200), nullable=False),
    sa.ForeignKeyConstraint(['part_id'], ['part.id'], ),
    sa.ForeignKeyConstraint(['seat_id'], ['seat.id'], ),
    sa.PrimaryKeyConstraint('id')
    )
    with op.batch_alter_table('substitution_note', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_substitution_note_part_id'), ['part_id'], unique=False)
        batch_op.create_index(batch_op.f('ix_substitution_note_seat_id'), ['seat_id'], unique=False)




def downgrade() -> None:
    with op.batch_alter_table('substitution_note', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_substitution_note_seat_id'))
        batch_op.drop_index(batch_op.f('ix_substitution_note_part_id'))

    op.drop_table('substitution_note')
    with op.batch_alter_table('stock_balance', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_stock_balance_part_id'))

    op.drop_table('stock_balance')
    with op.batch_alter_table('purchase_order_line', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_purchase_order_line_part_id'))
        batch_op.drop_index(batch_op.f('ix_purchase_order_line_order_id'))

    op.drop_table('purchase_order_line')
    with op.batch_alter_table('movement', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_movement_ts'))
        batch_op.drop_index(batch_op.f('ix_movement_reference'))
        batch_op.drop_index('ix_movement_part_ts')
        batch_op.drop_index(batch_op.f('ix_movement_lot_id'))
        batch_op.drop_index(batch_op.f('ix_movement_location_id'))
        batch_op.drop_index(batch_op.f('ix_movement_kind'))

    op.drop_table('movement')
    with op.batch_alter_table('kit_line', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_kit_line_part_id'))
        batch_op.drop_index(batch_op.f('ix_kit_line_kit_id'))

    op.drop_table('kit_line')
    with op.batch_alter_table('job_line', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_job_line_part_id'))
        batch_op.drop_index(batch_op.f('ix_job_line_job_id'))

    op.drop_table('job_line')
    with op.batch_alter_table('supplier_item', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_supplier_item_supplier_id'))
        batch_op.drop_index(batch_op.f('ix_supplier_item_part_id'))

    op.drop_table('supplier_item')
    with op.batch_alter_table('service_job', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_service_job_ref'))
        batch_op.drop_index(batch_op.f('ix_service_job_fork_ref'))
        batch_op.drop_index(batch_op.f('ix_service_job_fork_family_id'))
        batch_op.drop_index(batch_op.f('ix_service_job_day'))

    op.drop_table('service_job')
    with op.batch_alter_table('seat', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_seat_fork_family_id'))

    op.drop_table('seat')
    with op.batch_alter_table('purchase_order', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_purchase_order_supplier_id'))
        batch_op.drop_index(batch_op.f('ix_purchase_order_ref'))

    op.drop_table('purchase_order')
    with op.batch_alter_table('lot', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_lot_part_id'))

    op.drop_table('lot')
    with op.batch_alter_table('kit', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_kit_fork_family_id'))

    op.drop_table('kit')
    with op.batch_alter_table('fork_alias', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_fork_alias_text'))

    op.drop_table('fork_alias')
    with op.batch_alter_table('supplier', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_supplier_code'))

    op.drop_table('supplier')
    with op.batch_alter_table('part', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_part_kind'))
        batch_op.drop_index(batch_op.f('ix_part_code'))

    op.drop_table('part')
    with op.batch_alter_table('location', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_location_code'))

    op.drop_table('location')
    with op.batch_alter_table('import_batch', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_import_batch_fingerprint'))

    op.drop_table('import_batch')
    with op.batch_alter_table('fork_family', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_fork_family_code'))

    op.drop_table('fork_family')

