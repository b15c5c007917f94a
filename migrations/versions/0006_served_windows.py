"""After release: served batches, per-window summaries and the compact served rows.

Revision ID: 0006
Revises: 0001
Create Date: 2026-12-04 15:50:00
"""

from alembic import op
import sqlalchemy as sa


revision = '0006'
down_revision = "0005"
branch_labels = None
depends_on = None


def upgrade() -> None:
    op.create_table('served_batches',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('model_id', sa.Integer(), nullable=False),
    sa.Column('kind', sa.String(length=20), nullable=False),
    sa.Column('digest', sa.String(length=64), nullable=False),
    sa.Column('rows', sa.Integer(), nullable=False),
    sa.Column('details_json', sa.Text(), nullable=False),
    sa.Column('created_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('created_by', sa.String(length=100), nullable=False),
    sa.CheckConstraint("kind IN ('served', 'outcomes')", name='ck_served_batch_kind'),
    sa.ForeignKeyConstraint(['model_id'], ['models.id'], ),
    sa.PrimaryKeyConstraint('id'),
    sa.UniqueConstraint('model_id', 'kind', 'digest', name='uq_served_batch')
    )
    op.create_table('served_windows',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('model_id', sa.Integer(), nullable=False),
    sa.Column('version_id', sa.Integer(), nullable=False),
    sa.Column('window_start', sa.BigInteger(), nullable=False),
    sa.Column('window_seconds', sa.Integer(), nullable=False),
    sa.Column('rows', sa.BigInteger(), nullable=False),
    sa.Column('summary_json', sa.Text(), nullable=False),
    sa.Column('figures_json', sa.Text(), nullable=True),
    sa.Column('updated_at', sa.DateTime(timezone=True), nullable=False),
    sa.ForeignKeyConstraint(['model_id'], ['models.id'], ),
    sa.ForeignKeyConstraint(['version_id'], ['versions.id'], ),
    sa.PrimaryKeyConstraint('id'),
    sa.UniqueConstraint('model_id', 'version_id', 'window_start', 'window_seconds',
                        name='uq_served_window')
    )
    op.create_index(op.f('ix_served_windows_model_id'), 'served_windows', ['model_id'],
                    unique=False)
    op.create_table('served_rows',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('model_id', sa.Integer(), nullable=False),
    sa.Column('batch_id', sa.Integer(), nullable=False),
    sa.Column('kind', sa.String(length=20), nullable=False),
    sa.Column('version_id', sa.Integer(), nullable=True),
    sa.Column('window_start', sa.BigInteger(), nullable=False),
    sa.Column('rows', sa.Integer(), nullable=False),
    sa.Column('content', sa.LargeBinary(), nullable=False),
    sa.CheckConstraint("kind IN ('predictions', 'outcomes')", name='ck_served_rows_kind'),
    sa.ForeignKeyConstraint(['batch_id'], ['served_batches.id'], ),
    sa.ForeignKeyConstraint(['model_id'], ['models.id'], ),
    sa.ForeignKeyConstraint(['version_id'], ['versions.id'], ),
    sa.PrimaryKeyConstraint('id')
    )
    op.create_index(op.f('ix_served_rows_batch_id'), 'served_rows', ['batch_id'], unique=False)
    op.create_index('ix_served_rows_window', 'served_rows', ['model_id', 'window_start'],
                    unique=False)


def downgrade() -> None:
    op.drop_index('ix_served_rows_window', table_name='served_rows')
    op.drop_index(op.f('ix_served_rows_batch_id'), table_name='served_rows')
    op.drop_table('served_rows')
    op.drop_index(op.f('ix_served_windows_model_id'), table_name='served_windows')
    op.drop_table('served_windows')
    op.drop_table('served_batches')
