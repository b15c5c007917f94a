"""Dataset commands on the catalogue: `dataset add`, `dataset show`, `dataset list`.

They join the `dataset` group of registry.cli's table, beside the catalogue-free commands.
"""

from __future__ import annotations

import os

import click

from registry.cli.catalogue_commands import _client
from registry.cli.dataset_commands import (
    FORMAT_CHOICE,
    Work,
    fingerprint_paths,
    load_schema,
    render_fingerprint,
    work_options,
)
from registry.cli.output import emit, json_option, short_time
from registry.cli.params import FilePath


@click.command("add")
@click.argument("name")
@click.argument("paths", nargs=-1, required=True, metavar="PATH...")
@click.option("--schema", "schema_path", type=FilePath("a schema"), metavar="AVSC",
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
@click.option("--source-uri", default=None,
              help="Where the data lives (default: the file or folder named).")
@work_options
@json_option
def dataset_add(name: str, paths: tuple[str, ...], schema_path: str | None,
                file_format: str | None, role: str, derived_from: tuple[str, ...],
                keys: tuple[str, ...], exclude: tuple[str, ...], feed_of: str | None,
                source_uri: str | None, workers: int | None, cluster: str | None,
                cluster_timeout: float, as_json: bool) -> None:
    """Fingerprint PATH (a file, a folder, a quoted glob, or several) and register it as
    dataset NAME, with the list of files it was made from."""
    work = Work(workers, cluster, cluster_timeout)
    source_uri = source_uri or " ".join(os.path.abspath(p) for p in paths)
    client = _client()
    client.ping()  # fail on a catalogue out of reach before a long fingerprint
    run = fingerprint_paths(paths, load_schema(schema_path), file_format, keys, exclude, work)
    summary = client.add_dataset(name, run.fingerprint, run.sources, role=role,
                                 derived_from=derived_from, feed_of=feed_of,
                                 source_uri=source_uri)
    emit(summary, as_json, _render_added)


def render_sources(sources: list[dict]) -> list[str]:
    """The files a dataset was made from, one line each: size, SHA-256, path."""
    if not sources:
        return []
    total = sum(source["size"] for source in sources)
    lines = [f"files               {len(sources)} ({total:,} bytes)"]
    lines += [f"  {source['size']:>14,}  {source['sha256'][:16]}  {source['path']}"
              for source in sources]
    return lines


def _render_added(s: dict) -> str:
    if not s["created"]:
        return f"dataset {s['name']} is already registered with this content; nothing changed"
    return (f"registered dataset {s['name']} ({s['role']}, {s['rows']} rows, "
            f"{s['content_digest'][:12]})")


@click.command("show")
@click.argument("name")
@json_option
def dataset_show(name: str, as_json: bool) -> None:
    """Show a registered dataset: lineage, fingerprint and profile."""
    summary = _client().show_dataset(name)

    def text(s):
        recalled = f"  RECALLED: {s['recall_reason']}" if s["recalled"] else ""
        head = [f"{s['name']}  ({s['role']}, {s['rows']} rows){recalled}",
                f"derived from        {', '.join(s['derived_from']) or '-'}",
                f"source              {s['source_uri']}",
                f"registered          {short_time(s['created_at'])} by {s['created_by']}",
                *render_sources(s.get("sources") or [])]
        if summary.fingerprint is None:  # the remote door sends the summary only
            return "\n".join(head)
        return "\n".join(head) + "\n" + render_fingerprint(dict(summary.fingerprint))

    emit(summary, as_json, text)


@click.command("list")
@json_option
def dataset_list(as_json: bool) -> None:
    """Every registered dataset."""
    emit(_client().list_datasets(), as_json, lambda d: "\n".join(
        f"{s['name']:<32} {s['role']:<12} {s['rows']:>8} rows"
        f"{'  RECALLED' if s['recalled'] else ''}"
        for s in d["datasets"]) or "no datasets yet")

