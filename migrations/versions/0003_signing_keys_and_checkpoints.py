"""Signing keys, signed checkpoints, and the row digests each audit event carries.

Revision ID: 0003
Revises: 0001
Create Date: 2026-12-04 15:40:00
"""

from alembic import op
import sqlalchemy as sa


revision = '0003'
down_revision = '0001'
branch_labels = None
depends_on = None


def upgrade() -> None:
    op.create_table('signing_keys',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('key_id', sa.String(length=64), nullable=False),
    sa.Column('algorithm', sa.String(length=20), nullable=False),
    sa.Column('public_key_pem', sa.Text(), nullable=False),
    sa.Column('created_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('retired_at', sa.DateTime(timezone=True), nullable=True),
    sa.PrimaryKeyConstraint('id'),
    sa.UniqueConstraint('key_id')
    )
    op.create_table('checkpoints',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('sequence', sa.Integer(), nullable=False),
    sa.Column('head_hash', sa.String(length=64), nullable=False),
    sa.Column('signed_at', sa.String(length=40), nullable=False),
    sa.Column('key_id', sa.String(length=64), nullable=False),
    sa.Column('signature', sa.String(length=128), nullable=False),
    sa.PrimaryKeyConstraint('id')
    )
    with op.batch_alter_table('checkpoints', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_checkpoints_sequence'), ['sequence'], unique=False)
    with op.batch_alter_table('audit_events', schema=None) as batch_op:
        batch_op.add_column(sa.Column('rows_json', sa.Text(), nullable=True))


def downgrade() -> None:
    with op.batch_alter_table('audit_events', schema=None) as batch_op:
        batch_op.drop_column('rows_json')
    with op.batch_alter_table('checkpoints', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_checkpoints_sequence'))
    op.drop_table('checkpoints')
    op.drop_table('signing_keys')
