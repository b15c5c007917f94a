"""Release statements: signed DSSE envelopes recording moves into and out of exclusive stages.

Revision ID: 0004
Revises: 0003
"""

from alembic import op
import sqlalchemy as sa


revision = '0004'
down_revision = '0003'
branch_labels = None
depends_on = None


def upgrade() -> None:
    op.create_table('release_statements',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('model_id', sa.Integer(), nullable=False),
    sa.Column('version_id', sa.Integer(), nullable=False),
    sa.Column('stage', sa.String(length=100), nullable=False),
    sa.Column('move', sa.String(length=10), nullable=False),
    sa.Column('envelope_json', sa.Text(), nullable=False),
    sa.Column('envelope_digest', sa.String(length=64), nullable=False),
    sa.Column('key_id', sa.String(length=64), nullable=True),
    sa.Column('audit_sequence', sa.Integer(), nullable=False),
    sa.Column('created_at', sa.DateTime(timezone=True), nullable=False),
    sa.CheckConstraint("move IN ('entered', 'left')", name='ck_release_move'),
    sa.ForeignKeyConstraint(['model_id'], ['models.id'], ),
    sa.ForeignKeyConstraint(['version_id'], ['versions.id'], ),
    sa.PrimaryKeyConstraint('id'),
    sa.UniqueConstraint('envelope_digest')
    )
    op.create_index('ix_release_statements_stage', 'release_statements',
                    ['model_id', 'stage', 'id'], unique=False)
    op.create_index(op.f('ix_release_statements_version_id'), 'release_statements',
                    ['version_id'], unique=False)
    if op.get_bind().dialect.name == "postgresql":
        # Documents are served in chunks by `substring`; uncompressed out-of-line storage lets
        # PostgreSQL fetch just the chunk asked for instead of decompressing up to it.
        op.execute("ALTER TABLE blobs ALTER COLUMN content SET STORAGE EXTERNAL")


def downgrade() -> None:
    if op.get_bind().dialect.name == "postgresql":
        op.execute("ALTER TABLE blobs ALTER COLUMN content SET STORAGE EXTENDED")
    op.drop_index(op.f('ix_release_statements_version_id'), table_name='release_statements')
    op.drop_index('ix_release_statements_stage', table_name='release_statements')
    op.drop_table('release_statements')
