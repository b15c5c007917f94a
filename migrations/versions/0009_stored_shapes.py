"""Stored shapes: feature definitions as a JSON array, one evaluation record shape, predictions
as Arrow IPC files (docs/stored-shapes.md). No table changes; the rows of an existing catalogue
are converted in the upgrade's own transaction and sealed by one `catalogue.convert` event.

Revision ID: 0009
Revises: 0008
Create Date: 2026-12-04 18:40:00.000000
"""

from alembic import context

from registry.store.migrate import revision_actor, revision_catalogue

revision = "0009"
down_revision = "0008"
branch_labels = None
depends_on = None


def upgrade() -> None:
    from registry.service.coverage_upgrade import cover_rows_written_before_coverage
    from registry.service.shape_conversion import convert_stored_shapes

    catalogue = revision_catalogue()
    # A catalogue from before revision 0003 has rows no event covers yet: cover them first, so
    # the conversion's row digests extend a chain that already vouches for every row.
    covered = cover_rows_written_before_coverage(catalogue, revision_actor())
    context.config.attributes["rows_covered"] = covered
    convert_stored_shapes(catalogue, revision_actor())


def downgrade() -> None:
    from registry.service.shape_conversion import refuse_to_unconvert

    refuse_to_unconvert(revision_catalogue())
