"""Feeds and consumers as contracts: numbered writer schemas of a feed, the datasets it is built
from, the feed a model or version reads, and declared readers of a model's output.

Revision ID: 0005
Revises: 0001
Create Date: 2026-12-04 15:40:00
"""

from alembic import op
import sqlalchemy as sa


revision = '0005'
down_revision = "0004"
branch_labels = None
depends_on = None


def upgrade() -> None:
    op.create_table('feeds',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('name', sa.String(length=100), nullable=False),
    sa.Column('description', sa.Text(), nullable=False),
    sa.Column('retain_days', sa.Integer(), nullable=False),
    sa.Column('created_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('created_by', sa.String(length=100), nullable=False),
    sa.PrimaryKeyConstraint('id'),
    sa.UniqueConstraint('name')
    )
    op.create_table('feed_schemas',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('feed_id', sa.Integer(), nullable=False),
    sa.Column('number', sa.Integer(), nullable=False),
    sa.Column('schema_json', sa.Text(), nullable=False),
    sa.Column('fingerprint', sa.String(length=64), nullable=False),
    sa.Column('note', sa.Text(), nullable=False),
    sa.Column('published_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('published_by', sa.String(length=100), nullable=False),
    sa.ForeignKeyConstraint(['feed_id'], ['feeds.id'], ),
    sa.PrimaryKeyConstraint('id'),
    sa.UniqueConstraint('feed_id', 'number', name='uq_feed_schemas_number')
    )
    op.create_table('feed_sources',
    sa.Column('feed_id', sa.Integer(), nullable=False),
    sa.Column('dataset_id', sa.Integer(), nullable=False),
    sa.ForeignKeyConstraint(['dataset_id'], ['datasets.id'], ),
    sa.ForeignKeyConstraint(['feed_id'], ['feeds.id'], ),
    sa.PrimaryKeyConstraint('feed_id', 'dataset_id')
    )
    with op.batch_alter_table('feed_sources', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_feed_sources_dataset_id'), ['dataset_id'], unique=False)

    op.create_table('model_feeds',
    sa.Column('model_id', sa.Integer(), nullable=False),
    sa.Column('feed_id', sa.Integer(), nullable=False),
    sa.ForeignKeyConstraint(['feed_id'], ['feeds.id'], ),
    sa.ForeignKeyConstraint(['model_id'], ['models.id'], ),
    sa.PrimaryKeyConstraint('model_id')
    )
    with op.batch_alter_table('model_feeds', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_model_feeds_feed_id'), ['feed_id'], unique=False)

    op.create_table('version_feeds',
    sa.Column('version_id', sa.Integer(), nullable=False),
    sa.Column('feed_id', sa.Integer(), nullable=False),
    sa.ForeignKeyConstraint(['feed_id'], ['feeds.id'], ),
    sa.ForeignKeyConstraint(['version_id'], ['versions.id'], ),
    sa.PrimaryKeyConstraint('version_id')
    )
    with op.batch_alter_table('version_feeds', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_version_feeds_feed_id'), ['feed_id'], unique=False)

    op.create_table('consumers',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('name', sa.String(length=100), nullable=False),
    sa.Column('model_id', sa.Integer(), nullable=False),
    sa.Column('owner', sa.Text(), nullable=False),
    sa.Column('created_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('created_by', sa.String(length=100), nullable=False),
    sa.ForeignKeyConstraint(['model_id'], ['models.id'], ),
    sa.PrimaryKeyConstraint('id'),
    sa.UniqueConstraint('name')
    )
    with op.batch_alter_table('consumers', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_consumers_model_id'), ['model_id'], unique=False)

    op.create_table('consumer_schemas',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('consumer_id', sa.Integer(), nullable=False),
    sa.Column('number', sa.Integer(), nullable=False),
    sa.Column('schema_json', sa.Text(), nullable=False),
    sa.Column('fingerprint', sa.String(length=64), nullable=False),
    sa.Column('note', sa.Text(), nullable=False),
    sa.Column('created_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('created_by', sa.String(length=100), nullable=False),
    sa.ForeignKeyConstraint(['consumer_id'], ['consumers.id'], ),
    sa.PrimaryKeyConstraint('id'),
    sa.UniqueConstraint('consumer_id', 'number', name='uq_consumer_schemas_number')
    )


def downgrade() -> None:
    op.drop_table('consumer_schemas')
    with op.batch_alter_table('consumers', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_consumers_model_id'))

    op.drop_table('consumers')
    with op.batch_alter_table('version_feeds', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_version_feeds_feed_id'))

    op.drop_table('version_feeds')
    with op.batch_alter_table('model_feeds', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_model_feeds_feed_id'))

    op.drop_table('model_feeds')
    with op.batch_alter_table('feed_sources', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_feed_sources_dataset_id'))

    op.drop_table('feed_sources')
    op.drop_table('feed_schemas')
    op.drop_table('feeds')
