"""The `lockkeeper` command: a thin shell that parses, calls one use case and renders.

Each command lives in a module of this package and is named in COMMANDS below, one line per
command: it is imported only when it runs, so a pure check never loads the database layer.
"""

from __future__ import annotations

import sys
from collections.abc import Sequence
from typing import Any

import click

from registry.cli.lazy_group import Lazy, LazyGroup, lazy_group
from registry.cli.output import emit_error
from registry.errors import LockkeeperError

CATALOGUE = "registry.cli.catalogue_commands"
STAGES = "registry.cli.stage_commands"
DATASETS = "registry.cli.dataset_commands"
DATASETS_IN_CATALOGUE = "registry.cli.dataset_catalogue_commands"
DOCUMENTS = "registry.cli.document_commands"
READS = "registry.cli.read_commands"
CONTRACTS = "registry.cli.contract_commands"

# name -> where the command lives and the line `--help` shows for it. Add a command here.
COMMANDS: dict[str, Lazy | LazyGroup] = {
    "init": Lazy(f"{CATALOGUE}:init", "Create the catalogue, or bring it up to the newest schema."),
    "demo": Lazy(f"{CATALOGUE}:demo",
                 "Build a fresh demo catalogue and play the Brackwater story."),
    "serve": Lazy("registry.cli.serve_commands:serve", "Serve the lineage browser and the API."),
    "model": lazy_group("model", "Create and look at model lines.", {
        "create": Lazy(f"{CATALOGUE}:model_create", "Create a model line NAME."),
        "list": Lazy(f"{CATALOGUE}:model_list", "List every model and who holds each stage."),
        "show": Lazy(f"{CATALOGUE}:model_show", "Show a model line and its versions."),
        "policy": Lazy(f"{STAGES}:policy_group", "A model's promotion policy: show or set it."),
        "set-feed": Lazy(f"{CONTRACTS}:model_set_feed", "Declare the feed MODEL reads."),
    }),
    "register": Lazy(f"{CATALOGUE}:register", "Register DOCUMENT as the next version of MODEL."),
    "evaluate": Lazy("registry.cli.evaluation_commands:evaluate",
                     "Compute and store a version's metrics on an evaluation dataset."),
    "check": Lazy(f"{STAGES}:check", "Run the gates of a stage for a version; change nothing."),
    "promote": Lazy(f"{STAGES}:promote", "Move a version into a stage if its gates allow it."),
    "approve": Lazy(f"{STAGES}:approve", "Record your approval of a version for a stage."),
    "rollback": Lazy(f"{STAGES}:rollback", "Give a stage back to its previous holder."),
    "retire": Lazy(f"{STAGES}:retire", "Take a version out of service."),
    "status": Lazy(f"{STAGES}:status", "Who holds each stage of MODEL."),
    "history": Lazy(f"{STAGES}:history", "Every stage event of MODEL, with its gate reports."),
    "report": lazy_group("report", "Gate reports: every attempt to enter a stage.", {
        "show": Lazy(f"{READS}:report_show", "Show gate report ID."),
    }),
    "lineage": Lazy("registry.cli.lineage_commands:lineage",
                    "What went into NODE (--up) or came of it (--down)."),
    "dataset": lazy_group("dataset", "Fingerprint, compare, register and recall datasets.", {
        "fingerprint": Lazy(f"{DATASETS}:fingerprint_command",
                            "Fingerprint a dataset file (no catalogue needed)."),
        "compare": Lazy(f"{DATASETS}:compare_command",
                        "Record overlap and column drift of A and B."),
        "add": Lazy(f"{DATASETS_IN_CATALOGUE}:dataset_add",
                    "Fingerprint FILE and register it as dataset NAME."),
        "show": Lazy(f"{DATASETS_IN_CATALOGUE}:dataset_show",
                     "Show a registered dataset: lineage, fingerprint, profile."),
        "list": Lazy(f"{DATASETS_IN_CATALOGUE}:dataset_list", "Every registered dataset."),
        "recall": Lazy("registry.cli.lineage_commands:recall_command",
                       "Recall dataset NAME and flag everything downstream."),
    }),
    "schema": Lazy("registry.cli.schema_commands:schema_group",
                   "Check, compare and fingerprint Avro schemas (no catalogue needed)."),
    "document": Lazy(f"{DOCUMENTS}:document_group",
                     "Inspect model documents (no catalogue needed)."),
    "features": Lazy(f"{DOCUMENTS}:features_group",
                     "Check and compare feature definitions (no catalogue needed)."),
    "metrics": Lazy("registry.cli.metrics_commands:metrics_command",
                    "Metrics of a predictions file, against a baseline (no catalogue)."),
    "audit": lazy_group("audit", "The tamper-evident audit log: read it and verify it.", {
        "verify": Lazy(f"{CATALOGUE}:audit_verify",
                       "Recompute the audit chain and every stored digest."),
        "log": Lazy(f"{READS}:audit_log", "Read the audit log, newest first, with filters."),
        "checkpoint": Lazy(f"{CATALOGUE}:audit_checkpoint",
                           "Print the newest signed checkpoint, to keep elsewhere."),
    }),
    "feed": Lazy(f"{CONTRACTS}:feed", "Feeds a model reads: numbered writer schemas, checked."),
    "consumer": Lazy(f"{CONTRACTS}:consumer",
                     "Declared readers of a model's output, with their reader schemas."),
    "impact": Lazy(f"{CONTRACTS}:impact",
                   "What changes if a version enters a stage; changes nothing."),
    "serving": Lazy("registry.cli.serving_commands:serving",
                    "Served batches and outcomes sent back, and the after-release report."),
    "user": Lazy(f"{CATALOGUE}:user", "Roles of the people who act on the catalogue."),
    "token": Lazy("registry.cli.token_commands:token_group", "Bearer tokens for the HTTP API."),
    "key": Lazy("registry.cli.key_commands:key",
                "The catalogue's signing keys: create, list, rotate, public."),
    "release": Lazy("registry.cli.release_commands:release_group",
                    "Signed release statements: show the current one, verify one offline."),
    "export": Lazy("registry.cli.backup_commands:export_command",
                   "Write the whole catalogue into a new or empty folder."),
    "import": Lazy("registry.cli.backup_commands:import_command",
                   "Rebuild an exported catalogue into an empty one."),
}


# click 8.2 raises this for a group given no command; it carries the help, not an error.
NO_ARGUMENTS_IS_HELP = getattr(click.exceptions, "NoArgsIsHelpError", ())


class LockkeeperGroup(LazyGroup):
    """The root group: every error, ours or click's, becomes one line on stderr and its exit
    code, and under --json also one JSON document on stdout."""

    def main(self, args: Sequence[str] | None = None, prog_name: str | None = None,
             complete_var: str | None = None, standalone_mode: bool = True,
             **extra: Any) -> Any:
        arguments = list(sys.argv[1:] if args is None else args)
        try:
            result = super().main(arguments, prog_name, complete_var, standalone_mode=False,
                                  **extra)
        except LockkeeperError as error:  # from a command, or from checking a parameter
            emit_error(error.kind, error.message, error.where(), error.exit_code,
                       as_json="--json" in _options_part(arguments))
            result = error.exit_code
        except NO_ARGUMENTS_IS_HELP as error:  # `lockkeeper` or `lockkeeper dataset` alone
            click.echo(error.ctx.get_help(), err=True)
            result = error.exit_code
        except click.ClickException as error:
            emit_error("usage", _usage_message(error), _usage_place(error), error.exit_code,
                       as_json="--json" in _options_part(arguments))
            result = error.exit_code
        except click.Abort:
            click.echo("lockkeeper: stopped", err=True)
            result = 1
        if not standalone_mode:
            return result
        code = result if isinstance(result, int) else 0
        if args is None:  # the `lockkeeper` process itself, not a command run in-process
            from registry.cli.process_end import end_process

            end_process(code)
        sys.exit(code)


def _options_part(arguments: list[str]) -> list[str]:
    return arguments[:arguments.index("--")] if "--" in arguments else arguments


def _usage_place(error: click.ClickException) -> str | None:
    """The command whose usage it is, without the program's own name: `schema check`."""
    ctx = getattr(error, "ctx", None)
    if ctx is None:
        return None
    return ctx.command_path.partition(" ")[2] or None


def _usage_message(error: click.ClickException) -> str:
    text = error.format_message().strip()
    if len(text) > 1 and text[1].islower():  # "Missing argument" -> "missing argument"
        text = text[0].lower() + text[1:]
    return text.rstrip(".") + " (see --help)"


@click.group(cls=LockkeeperGroup, lazy_commands=COMMANDS,
             context_settings={"help_option_names": ["-h", "--help"]})
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


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
