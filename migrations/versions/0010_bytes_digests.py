"""The digest of a stored bytes value is taken over the bytes themselves, not their hex text
(docs/row-coverage.md). No table changes; the rows holding bytes of an existing catalogue get
their digests recorded again, in the new form, by one `catalogue.convert` event, once the chain
is found to vouch for them as they stand (registry/service/digest_conversion.py).

Revision ID: 0010
Revises: 0009
Create Date: 2026-12-05 02:30:00.000000
"""

from alembic import context, op

revision = "0010"
down_revision = "0009"
branch_labels = None
depends_on = None


def _catalogue():
    from registry.store.catalogue import on_connection

    return on_connection(op.get_bind(), context.config.attributes.get("catalogue"))


def _actor() -> str:
    from registry.store.migrate import UPGRADE_ACTOR

    return context.config.attributes.get("actor") or UPGRADE_ACTOR


def upgrade() -> None:
    from registry.service.digest_conversion import redigest_bytes

    redigest_bytes(_catalogue(), _actor())


def downgrade() -> None:
    from registry.service.digest_conversion import redigest_bytes

    redigest_bytes(_catalogue(), _actor(), upgrading=False)
