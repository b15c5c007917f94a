"""The `lockkeeper` command: a thin shell that parses, calls one use case and renders.

Each command group lives in its own module here and is added to `main` below.
"""

from __future__ import annotations

import sys
from typing import Any

import click

from registry.errors import LockkeeperError


class LockkeeperGroup(click.Group):
    """A click group that turns the typed errors into one line on stderr and an exit code."""

    def invoke(self, ctx: click.Context) -> Any:
        try:
            return super().invoke(ctx)
        except LockkeeperError as error:
            click.echo(f"lockkeeper: {error.one_line()}", err=True)
            ctx.exit(error.exit_code)


@click.group(cls=LockkeeperGroup, context_settings={"help_option_names": ["-h", "--help"]})
@click.option("--db", "db_url", envvar="LOCKKEEPER_DB", default=None, metavar="URL",
              help="Catalogue URL (default: sqlite file ./.lockkeeper/catalogue.db).")
@click.option("--as", "acting_user", envvar="LOCKKEEPER_USER", default=None, metavar="USER",
              help="Act as this user (default: the login name).")
@click.option("--server", envvar="LOCKKEEPER_SERVER", default=None, metavar="URL",
              help="Act on the remote catalogue served at URL (its HTTP API) instead.")
@click.option("--token", envvar="LOCKKEEPER_TOKEN", default=None, metavar="T",
              help="Bearer token for --server.")
@click.version_option(package_name="lockkeeper", prog_name="lockkeeper")
@click.pass_context
def main(ctx: click.Context, db_url: str | None, acting_user: str | None, server: str | None,
         token: str | None) -> None:
    """Lockkeeper: a model release registry with lineage and promotion gates."""
    from registry.cli.context import CommandContext

    ctx.obj = CommandContext(db_url=db_url, acting_user=acting_user, server=server, token=token)
    ctx.call_on_close(ctx.obj.close)


# Each module named here exposes COMMANDS, a list of click commands or groups.
COMMAND_MODULES = [
    "registry.cli.catalogue_commands",
    "registry.cli.stage_commands",
    "registry.cli.evaluation_commands",
    "registry.cli.schema_commands",
    "registry.cli.metrics_commands",
    "registry.cli.dataset_commands",
    "registry.cli.dataset_catalogue_commands",
    "registry.cli.document_commands",
    "registry.cli.document_get_commands",
    "registry.cli.release_commands",
    "registry.cli.lineage_commands",
    "registry.cli.serve_commands",
    "registry.cli.token_commands",
    "registry.cli.backup_commands",
    "registry.cli.key_commands",
]


def _register_command_groups() -> None:
    import importlib

    for module_name in COMMAND_MODULES:
        for command in importlib.import_module(module_name).COMMANDS:
            main.add_command(command)


_register_command_groups()


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
