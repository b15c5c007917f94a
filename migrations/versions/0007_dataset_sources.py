"""The files each dataset was made from: path within the dataset, size and SHA-256.

Revision ID: 0007
Revises: 0001
Create Date: 2026-12-04 16:05:00.000000
"""

from alembic import op
import sqlalchemy as sa


revision = '0007'
down_revision = "0006"
branch_labels = None
depends_on = None


def upgrade() -> None:
    op.create_table('dataset_sources',
    sa.Column('dataset_id', sa.Integer(), nullable=False),
    sa.Column('position', sa.Integer(), nullable=False),
    sa.Column('path', sa.Text(), nullable=False),
    sa.Column('size', sa.BigInteger(), nullable=False),
    sa.Column('sha256', sa.String(length=64), nullable=False),
    sa.ForeignKeyConstraint(['dataset_id'], ['datasets.id'], ),
    sa.PrimaryKeyConstraint('dataset_id', 'position')
    )
    with op.batch_alter_table('dataset_sources', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_dataset_sources_sha256'), ['sha256'], unique=False)


def downgrade() -> None:
    with op.batch_alter_table('dataset_sources', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_dataset_sources_sha256'))

    op.drop_table('dataset_sources')
