"""The catalogue tables: models, versions, blobs, datasets, evaluations, stages, audit log.

Revision ID: 0001
Revises:
Create Date: 2026-12-01 20:33:35.713269
"""

from alembic import op
import sqlalchemy as sa


revision = '0001'
down_revision = None
branch_labels = None
depends_on = None


def upgrade() -> None:
    op.create_table('api_tokens',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('token_hash', sa.String(length=64), nullable=False),
    sa.Column('user', sa.String(length=100), nullable=False),
    sa.Column('role', sa.String(length=20), nullable=False),
    sa.Column('label', sa.Text(), nullable=False),
    sa.Column('created_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('created_by', sa.String(length=100), nullable=False),
    sa.Column('expires_at', sa.DateTime(timezone=True), nullable=True),
    sa.Column('revoked_at', sa.DateTime(timezone=True), nullable=True),
    sa.PrimaryKeyConstraint('id'),
    sa.UniqueConstraint('token_hash')
    )
    op.create_table('audit_events',
    sa.Column('sequence', sa.Integer(), autoincrement=False, nullable=False),
    sa.Column('occurred_at', sa.String(length=40), nullable=False),
    sa.Column('actor', sa.String(length=100), nullable=False),
    sa.Column('action', sa.String(length=40), nullable=False),
    sa.Column('subject', sa.Text(), nullable=False),
    sa.Column('details_json', sa.Text(), nullable=False),
    sa.Column('previous_hash', sa.String(length=64), nullable=False),
    sa.Column('hash', sa.String(length=64), nullable=False),
    sa.PrimaryKeyConstraint('sequence')
    )
    op.create_table('audit_head',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('sequence', sa.Integer(), nullable=False),
    sa.Column('hash', sa.String(length=64), nullable=False),
    sa.PrimaryKeyConstraint('id')
    )
    op.create_table('blobs',
    sa.Column('digest', sa.String(length=64), nullable=False),
    sa.Column('size', sa.Integer(), nullable=False),
    sa.Column('content', sa.LargeBinary(), nullable=False),
    sa.PrimaryKeyConstraint('digest')
    )
    op.create_table('models',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('name', sa.String(length=100), nullable=False),
    sa.Column('description', sa.Text(), nullable=False),
    sa.Column('policy_toml', sa.Text(), nullable=True),
    sa.Column('created_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('created_by', sa.String(length=100), nullable=False),
    sa.PrimaryKeyConstraint('id'),
    sa.UniqueConstraint('name')
    )
    op.create_table('role_grants',
    sa.Column('user', sa.String(length=100), nullable=False),
    sa.Column('role', sa.String(length=20), nullable=False),
    sa.Column('granted_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('granted_by', sa.String(length=100), nullable=False),
    sa.PrimaryKeyConstraint('user', 'role')
    )
    op.create_table('datasets',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('name', sa.String(length=100), nullable=False),
    sa.Column('role', sa.String(length=20), nullable=False),
    sa.Column('source_uri', sa.Text(), nullable=False),
    sa.Column('rows', sa.Integer(), nullable=False),
    sa.Column('content_digest', sa.String(length=64), nullable=False),
    sa.Column('schema_fingerprint', sa.String(length=64), nullable=False),
    sa.Column('schema_json', sa.Text(), nullable=False),
    sa.Column('fingerprint_digest', sa.String(length=64), nullable=False),
    sa.Column('feed_model_id', sa.Integer(), nullable=True),
    sa.Column('registration_digest', sa.String(length=64), nullable=False),
    sa.Column('created_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('created_by', sa.String(length=100), nullable=False),
    sa.Column('recalled_at', sa.DateTime(timezone=True), nullable=True),
    sa.Column('recall_reason', sa.Text(), nullable=True),
    sa.Column('recalled_by', sa.String(length=100), nullable=True),
    sa.ForeignKeyConstraint(['fingerprint_digest'], ['blobs.digest'], ),
    sa.ForeignKeyConstraint(['feed_model_id'], ['models.id'], ),
    sa.PrimaryKeyConstraint('id'),
    sa.UniqueConstraint('name')
    )
    op.create_table('versions',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('model_id', sa.Integer(), nullable=False),
    sa.Column('number', sa.Integer(), nullable=False),
    sa.Column('document_digest', sa.String(length=64), nullable=False),
    sa.Column('stored_blob_digest', sa.String(length=64), nullable=False),
    sa.Column('document_kind', sa.String(length=20), nullable=False),
    sa.Column('document_summary_json', sa.Text(), nullable=False),
    sa.Column('input_schema_json', sa.Text(), nullable=False),
    sa.Column('output_schema_json', sa.Text(), nullable=True),
    sa.Column('features_json', sa.Text(), nullable=True),
    sa.Column('description', sa.Text(), nullable=False),
    sa.Column('code_revision', sa.String(length=200), nullable=False),
    sa.Column('author', sa.String(length=100), nullable=False),
    sa.Column('parent_number', sa.Integer(), nullable=True),
    sa.Column('registration_digest', sa.String(length=64), nullable=False),
    sa.Column('created_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('created_by', sa.String(length=100), nullable=False),
    sa.ForeignKeyConstraint(['stored_blob_digest'], ['blobs.digest'], ),
    sa.ForeignKeyConstraint(['model_id'], ['models.id'], ),
    sa.PrimaryKeyConstraint('id'),
    sa.UniqueConstraint('model_id', 'number', name='uq_versions_model_number')
    )
    with op.batch_alter_table('versions', schema=None) as batch_op:
        batch_op.create_index('ix_versions_model_registration', ['model_id', 'registration_digest'], unique=False)

    op.create_table('approvals',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('version_id', sa.Integer(), nullable=False),
    sa.Column('stage', sa.String(length=100), nullable=False),
    sa.Column('approver', sa.String(length=100), nullable=False),
    sa.Column('note', sa.Text(), nullable=False),
    sa.Column('created_at', sa.DateTime(timezone=True), nullable=False),
    sa.ForeignKeyConstraint(['version_id'], ['versions.id'], ),
    sa.PrimaryKeyConstraint('id'),
    sa.UniqueConstraint('version_id', 'stage', 'approver', name='uq_approval')
    )
    with op.batch_alter_table('approvals', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_approvals_version_id'), ['version_id'], unique=False)

    op.create_table('dataset_parents',
    sa.Column('child_id', sa.Integer(), nullable=False),
    sa.Column('parent_id', sa.Integer(), nullable=False),
    sa.ForeignKeyConstraint(['child_id'], ['datasets.id'], ),
    sa.ForeignKeyConstraint(['parent_id'], ['datasets.id'], ),
    sa.PrimaryKeyConstraint('child_id', 'parent_id')
    )
    with op.batch_alter_table('dataset_parents', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_dataset_parents_parent_id'), ['parent_id'], unique=False)

    op.create_table('evaluations',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('version_id', sa.Integer(), nullable=False),
    sa.Column('dataset_id', sa.Integer(), nullable=False),
    sa.Column('dataset_content_digest', sa.String(length=64), nullable=False),
    sa.Column('task', sa.String(length=20), nullable=False),
    sa.Column('metrics_json', sa.Text(), nullable=False),
    sa.Column('predictions_digest', sa.String(length=64), nullable=False),
    sa.Column('created_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('created_by', sa.String(length=100), nullable=False),
    sa.ForeignKeyConstraint(['dataset_id'], ['datasets.id'], ),
    sa.ForeignKeyConstraint(['predictions_digest'], ['blobs.digest'], ),
    sa.ForeignKeyConstraint(['version_id'], ['versions.id'], ),
    sa.PrimaryKeyConstraint('id'),
    sa.UniqueConstraint('version_id', 'dataset_id', name='uq_evaluation')
    )
    with op.batch_alter_table('evaluations', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_evaluations_dataset_id'), ['dataset_id'], unique=False)

    op.create_table('gate_reports',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('model_id', sa.Integer(), nullable=False),
    sa.Column('version_id', sa.Integer(), nullable=False),
    sa.Column('stage', sa.String(length=100), nullable=False),
    sa.Column('attempt', sa.String(length=20), nullable=False),
    sa.Column('passed', sa.Boolean(), nullable=False),
    sa.Column('report_json', sa.Text(), nullable=False),
    sa.Column('created_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('created_by', sa.String(length=100), nullable=False),
    sa.ForeignKeyConstraint(['model_id'], ['models.id'], ),
    sa.ForeignKeyConstraint(['version_id'], ['versions.id'], ),
    sa.PrimaryKeyConstraint('id')
    )
    with op.batch_alter_table('gate_reports', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_gate_reports_model_id'), ['model_id'], unique=False)

    op.create_table('version_datasets',
    sa.Column('version_id', sa.Integer(), nullable=False),
    sa.Column('dataset_id', sa.Integer(), nullable=False),
    sa.Column('relation', sa.String(length=20), nullable=False),
    sa.CheckConstraint("relation IN ('trained-on', 'evaluated-on')", name='ck_relation'),
    sa.ForeignKeyConstraint(['dataset_id'], ['datasets.id'], ),
    sa.ForeignKeyConstraint(['version_id'], ['versions.id'], ),
    sa.PrimaryKeyConstraint('version_id', 'dataset_id', 'relation')
    )
    with op.batch_alter_table('version_datasets', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_version_datasets_dataset_id'), ['dataset_id'], unique=False)

    op.create_table('stage_events',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('model_id', sa.Integer(), nullable=False),
    sa.Column('version_id', sa.Integer(), nullable=False),
    sa.Column('stage', sa.String(length=100), nullable=False),
    sa.Column('event', sa.String(length=20), nullable=False),
    sa.Column('details_json', sa.Text(), nullable=False),
    sa.Column('report_id', sa.Integer(), nullable=True),
    sa.Column('created_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('created_by', sa.String(length=100), nullable=False),
    sa.ForeignKeyConstraint(['model_id'], ['models.id'], ),
    sa.ForeignKeyConstraint(['report_id'], ['gate_reports.id'], ),
    sa.ForeignKeyConstraint(['version_id'], ['versions.id'], ),
    sa.PrimaryKeyConstraint('id')
    )
    with op.batch_alter_table('stage_events', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_stage_events_model_id'), ['model_id'], unique=False)
        batch_op.create_index(batch_op.f('ix_stage_events_version_id'), ['version_id'], unique=False)

    op.create_table('stage_holdings',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('model_id', sa.Integer(), nullable=False),
    sa.Column('version_id', sa.Integer(), nullable=False),
    sa.Column('stage', sa.String(length=100), nullable=False),
    sa.Column('is_exclusive', sa.Boolean(), nullable=False),
    sa.Column('since', sa.DateTime(timezone=True), nullable=False),
    sa.Column('report_id', sa.Integer(), nullable=True),
    sa.ForeignKeyConstraint(['model_id'], ['models.id'], ),
    sa.ForeignKeyConstraint(['report_id'], ['gate_reports.id'], ),
    sa.ForeignKeyConstraint(['version_id'], ['versions.id'], ),
    sa.Column('previous_version_id', sa.Integer(), nullable=True),
    sa.ForeignKeyConstraint(['previous_version_id'], ['versions.id'], ),
    sa.PrimaryKeyConstraint('id'),
    sa.UniqueConstraint('model_id', 'stage', 'version_id', name='uq_holding')
    )
    with op.batch_alter_table('stage_holdings', schema=None) as batch_op:
        batch_op.create_index('uq_exclusive_stage', ['model_id', 'stage'], unique=True, sqlite_where=sa.text('is_exclusive'), postgresql_where=sa.text('is_exclusive'))



def downgrade() -> None:
    with op.batch_alter_table('stage_holdings', schema=None) as batch_op:
        batch_op.drop_index('uq_exclusive_stage', sqlite_where=sa.text('is_exclusive'), postgresql_where=sa.text('is_exclusive'))

    op.drop_table('stage_holdings')
    with op.batch_alter_table('stage_events', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_stage_events_version_id'))
        batch_op.drop_index(batch_op.f('ix_stage_events_model_id'))

    op.drop_table('stage_events')
    with op.batch_alter_table('version_datasets', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_version_datasets_dataset_id'))

    op.drop_table('version_datasets')
    with op.batch_alter_table('gate_reports', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_gate_reports_model_id'))

    op.drop_table('gate_reports')
    with op.batch_alter_table('evaluations', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_evaluations_dataset_id'))

    op.drop_table('evaluations')
    with op.batch_alter_table('dataset_parents', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_dataset_parents_parent_id'))

    op.drop_table('dataset_parents')
    with op.batch_alter_table('approvals', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_approvals_version_id'))

    op.drop_table('approvals')
    with op.batch_alter_table('versions', schema=None) as batch_op:
        batch_op.drop_index('ix_versions_model_registration')

    op.drop_table('versions')
    op.drop_table('datasets')
    op.drop_table('role_grants')
    op.drop_table('models')
    op.drop_table('blobs')
    op.drop_table('audit_head')
    op.drop_table('audit_events')
    op.drop_table('api_tokens')
