"""`lockkeeper export DIR` and `lockkeeper import DIR`: the whole catalogue to a folder and back."""

from __future__ import annotations

from pathlib import Path

import click

from registry.cli.output import emit, json_option


def _render(verb: str):
    def text(summary: dict) -> str:
        rows = sum(summary["tables"].values())
        seal = (f"sealed by {summary['sealed_by'][:16]}"
                + (" (trusted)" if summary.get("trusted") else " (not checked: no --trust)")
                if summary.get("sealed_by") else "not sealed")
        return (f"{verb} {rows} rows and {summary['blobs']} blobs ({summary['folder']}); audit "
                f"head event {summary['audit_sequence']} {summary['audit_hash'][:12]}; {seal}")
    return text


@click.command("export")
@click.argument("folder", metavar="DIR", type=click.Path(file_okay=False))
@json_option
def export_command(folder: str, as_json: bool) -> None:
    """Write the whole catalogue, from one snapshot, into a new or empty folder."""
    from registry.service.backup import export_catalogue
    from registry.store import migrate

    catalogue = click.get_current_context().obj.catalogue()
    summary = export_catalogue(catalogue, Path(folder), migrate.current_revision(catalogue) or "")
    emit(summary, as_json, _render("exported"))


@click.command("import")
@click.argument("folder", metavar="DIR", type=click.Path(file_okay=False))
@click.option("--trust", "trusted_key", type=click.Path(dir_okay=False), default=None,
              metavar="PUBKEY.pem",
              help="Import only an export sealed by this public key (see `key list`).")
@json_option
def import_command(folder: str, trusted_key: str | None, as_json: bool) -> None:
    """Rebuild an exported catalogue into an empty one, after checking every digest, the
    audit chain and every row against it (and the seal, with --trust)."""
    from registry.service.backup import import_catalogue, read_export, read_trusted_key
    from registry.store import migrate
    from registry.store.catalogue import open_catalogue

    context = click.get_current_context().obj
    trusted = read_trusted_key(Path(trusted_key)) if trusted_key else None
    # checked before any change
    export = read_export(Path(folder), migrate.head_revision(), trusted)
    catalogue = open_catalogue(context.db_url, must_exist=False)
    try:
        migrate.upgrade(catalogue)  # an empty catalogue may not have been initialised yet
        summary = import_catalogue(catalogue, export)
    finally:
        catalogue.close()
    emit(summary, as_json, _render("imported"))


COMMANDS = [export_command, import_command]
