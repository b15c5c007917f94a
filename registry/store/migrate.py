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


# Who the audit events a revision appends name as their actor, unless the caller says.
UPGRADE_ACTOR = "lockkeeper-upgrade"


def revision_catalogue() -> Catalogue:
    """For a revision that converts rows (0009, 0010): the catalogue whose units of work run
    in savepoints of the upgrade's own transaction."""
    from alembic import context, op

    from registry.store.catalogue import on_connection

    return on_connection(op.get_bind(), context.config.attributes.get("catalogue"))


def revision_actor() -> str:
    """Whom the audit events of a converting revision name as their actor."""
    from alembic import context

    return context.config.attributes.get("actor") or UPGRADE_ACTOR


def _run(catalogue: Catalogue, action, revision: str, actor: str) -> dict:
    """Run revisions in one transaction; revisions that convert rows (0009) work through units
    of work joined to it, so a failure anywhere leaves the catalogue as it was."""
    config = alembic_config(catalogue)
    with catalogue.engine.begin() as connection:
        config.attributes.update(connection=connection, catalogue=catalogue, actor=actor)
        action(config, revision)
    return config.attributes


def upgrade(catalogue: Catalogue, revision: str = "head", *, actor: str = UPGRADE_ACTOR) -> int:
    """Bring the catalogue to a revision; return how many earlier rows a revision brought under
    the audit chain on the way (registry/service/coverage_upgrade.py)."""
    attributes = _run(catalogue, command.upgrade, revision, actor)
    return int(attributes.get("rows_covered", 0))


def downgrade(catalogue: Catalogue, revision: str = "base", *,
              actor: str = UPGRADE_ACTOR) -> None:
    _run(catalogue, command.downgrade, revision, actor)


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
