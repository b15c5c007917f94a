"""The digest of a stored bytes value is taken over the bytes themselves, not their hex text
(docs/row-coverage.md). No table changes; the rows holding bytes of an existing catalogue get
their digests recorded again, in the new form, by one `catalogue.convert` event, once the chain
is found to vouch for them as they stand (registry/service/digest_conversion.py).

Revision ID: 0010
Revises: 0009
Create Date: 2026-12-05 02:30:00.000000
"""

from registry.store.migrate import revision_actor, revision_catalogue

revision = "0010"
down_revision = "0009"
branch_labels = None
depends_on = None


def upgrade() -> None:
    from registry.service.digest_conversion import redigest_bytes

    redigest_bytes(revision_catalogue(), revision_actor())


def downgrade() -> None:
    from registry.service.digest_conversion import redigest_bytes

    redigest_bytes(revision_catalogue(), revision_actor(), upgrading=False)
