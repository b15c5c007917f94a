"""Migrations are the only way the catalogue's schema changes; they round-trip and match the code."""

from __future__ import annotations

from alembic.autogenerate import compare_metadata
from alembic.runtime.migration import MigrationContext
from sqlalchemy import inspect

from registry.store import migrate
from registry.store.catalogue import open_catalogue
from registry.store.tables import Base


def _table_names(catalogue) -> set[str]:
    with catalogue.engine.connect() as connection:
        return set(inspect(connection).get_table_names()) - {"alembic_version"}


def test_upgrade_downgrade_upgrade_round_trip(empty_catalogue_url):
    catalogue = open_catalogue(empty_catalogue_url, must_exist=False)
    try:
        migrate.upgrade(catalogue)
        assert _table_names(catalogue) == set(Base.metadata.tables)
        migrate.downgrade(catalogue, "base")
        assert _table_names(catalogue) == set()
        migrate.upgrade(catalogue)
        assert migrate.current_revision(catalogue) == migrate.head_revision()
    finally:
        catalogue.close()


def test_mappings_and_migrations_agree(empty_catalogue_url):
    # Alembic's own comparison (alembic.autogenerate.compare_metadata): no difference at head.
    catalogue = open_catalogue(empty_catalogue_url, must_exist=False)
    try:
        migrate.upgrade(catalogue)
        with catalogue.engine.connect() as connection:
            context = MigrationContext.configure(connection, opts={"compare_type": True})
            differences = compare_metadata(context, Base.metadata)
        assert differences == []
    finally:
        catalogue.close()
