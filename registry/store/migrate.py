"""Schema changes of the catalogue, only through the Alembic revisions in migrations/."""

from __future__ import annotations

from pathlib import Path

from alembic import command
from alembic.config import Config
from alembic.runtime.migration import MigrationContext
from alembic.script import ScriptDirectory

from registry.store.catalogue import Catalogue

MIGRATIONS_DIR = Path(__file__).resolve().parents[2] / "migrations"


def alembic_config(catalogue: Catalogue) -> Config:
    config = Config()
    config.set_main_option("script_location", str(MIGRATIONS_DIR))
    return config


def _run(catalogue: Catalogue, action, revision: str) -> None:
    config = alembic_config(catalogue)
    with catalogue.engine.begin() as connection:
        config.attributes["connection"] = connection
        action(config, revision)


def upgrade(catalogue: Catalogue, revision: str = "head") -> None:
    _run(catalogue, command.upgrade, revision)


def downgrade(catalogue: Catalogue, revision: str = "base") -> None:
    _run(catalogue, command.downgrade, revision)


def head_revision() -> str:
    script = ScriptDirectory.from_config(_bare_config())
    return script.get_current_head() or ""


def current_revision(catalogue: Catalogue) -> str | None:
    with catalogue.engine.connect() as connection:
        return MigrationContext.configure(connection).get_current_revision()


def _bare_config() -> Config:
    config = Config()
    config.set_main_option("script_location", str(MIGRATIONS_DIR))
    return config
