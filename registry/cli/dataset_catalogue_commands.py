"""Dataset commands on the catalogue: `dataset add`, `dataset show`, `dataset list`.

They join the `dataset` group of dataset_commands, beside the catalogue-free commands.
"""

from __future__ import annotations

import os

import click

from registry.cli.catalogue_commands import _actor, _context
from registry.cli.dataset_commands import (
    FORMAT_CHOICE,
    dataset,
    fingerprint_path,
    load_schema,
    render_fingerprint,
)
from registry.cli.lineage_commands import recall_command
from registry.cli.output import emit, json_option
from registry.errors import UserError


@dataset.command("add")
@click.argument("name")
@click.argument("file", type=click.Path(dir_okay=False))
@click.option("--schema", "schema_path", type=click.Path(dir_okay=False), metavar="AVSC",
              help="Avro schema of the records (required for CSV).")
@click.option("--format", "file_format", type=FORMAT_CHOICE, default=None)
@click.option("--role", type=click.Choice(["source", "training", "evaluation", "live-sample"]),
              default="source", show_default=True)
@click.option("--derived-from", "derived_from", multiple=True, metavar="NAME",
              help="A registered dataset this one was made from (repeatable).")
@click.option("--key", "keys", multiple=True, metavar="COL",
              help="Key column: its value set is fingerprinted, and it is left out of the "
                   "feature-only digest and sketch (repeatable).")
@click.option("--exclude", multiple=True, metavar="COL",
              help="Column left out of the feature-only digest and sketch, e.g. the label.")
@click.option("--feed-of", "feed_of", default=None, metavar="MODEL",
              help="For a live sample: the model whose feed it was taken from.")
@click.option("--source-uri", default=None, help="Where the data lives (default: the file).")
@json_option
def dataset_add(name: str, file: str, schema_path: str | None, file_format: str | None,
                role: str, derived_from: tuple[str, ...], keys: tuple[str, ...],
                exclude: tuple[str, ...], feed_of: str | None, source_uri: str | None,
                as_json: bool) -> None:
    """Fingerprint FILE and register it as dataset NAME."""
    from registry.service.datasets import DatasetRequest, add_dataset

    if not os.path.isfile(file):
        raise UserError("no such file", place=file)
    remote = _context().remote()
    if remote:  # fingerprint here, so only the fingerprint crosses the network
        fingerprint = fingerprint_path(file, load_schema(schema_path), file_format, keys, exclude)
        summary = remote.add_dataset_fingerprint(
            name, fingerprint.to_dict(), role=role, derived_from=derived_from, feed_of=feed_of,
            source_uri=source_uri or os.path.abspath(file))
        emit(summary, as_json, _render_added)
        return
    catalogue = _context().catalogue()  # fail on a bad catalogue before a long fingerprint
    fingerprint = fingerprint_path(file, load_schema(schema_path), file_format, keys, exclude)
    request = DatasetRequest(name=name, role=role, fingerprint=fingerprint,
                             source_uri=source_uri or os.path.abspath(file),
                             derived_from=derived_from, feed_of=feed_of)
    summary = add_dataset(catalogue, request, _actor())
    emit(summary, as_json, _render_added)


def _render_added(s: dict) -> str:
    if not s["created"]:
        return f"dataset {s['name']} is already registered with this content; nothing changed"
    return (f"registered dataset {s['name']} ({s['role']}, {s['rows']} rows, "
            f"{s['content_digest'][:12]})")


@dataset.command("show")
@click.argument("name")
@json_option
def dataset_show(name: str, as_json: bool) -> None:
    """Show a registered dataset: lineage, fingerprint and profile."""
    from registry.service.datasets import fingerprint_of, show_dataset

    remote = _context().remote()
    summary = remote.show_dataset(name) if remote else show_dataset(_context().catalogue(), name)

    def text(s):
        recalled = f"  RECALLED: {s['recall_reason']}" if s["recalled"] else ""
        head = [f"{s['name']}  ({s['role']}, {s['rows']} rows){recalled}",
                f"derived from        {', '.join(s['derived_from']) or '-'}",
                f"source              {s['source_uri']}",
                f"registered          {s['created_at']} by {s['created_by']}"]
        if remote:
            return "\n".join(head)
        return "\n".join(head) + "\n" + render_fingerprint(
            fingerprint_of(_context().catalogue(), name).to_dict())

    emit(summary, as_json, text)


@dataset.command("list")
@json_option
def dataset_list(as_json: bool) -> None:
    """Every registered dataset."""
    from registry.service.datasets import list_datasets

    remote = _context().remote()
    found = (remote.list_datasets() if remote
             else {"datasets": list_datasets(_context().catalogue())})
    emit(found, as_json, lambda d: "\n".join(
        f"{s['name']:<32} {s['role']:<12} {s['rows']:>8} rows"
        f"{'  RECALLED' if s['recalled'] else ''}"
        for s in d["datasets"]) or "no datasets yet")


dataset.add_command(recall_command, "recall")

COMMANDS: list = []  # the commands above join the `dataset` group
