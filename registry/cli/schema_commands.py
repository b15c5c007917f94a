"""`lockkeeper schema check|diff|fingerprint`: schema commands that need no catalogue."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import click

from registry.cli.files import read_file_text
from registry.cli.lazy_group import LazyGroup
from registry.cli.output import emit, json_option
from registry.schema import Schema, diff, fingerprint, load, resolution_document, resolve
from registry.schema.diff import SchemaDiff


def read_schema(path: str | Path) -> Schema:
    """The schema in an .avsc file; every problem with the file or the schema is one line."""
    return load(read_file_text(path, "a schema"), source=str(path))


def _render_resolution(document: dict[str, Any]) -> str:
    count = len(document["problems"])
    lines = ["compatible" if document["compatible"]
             else f"incompatible: {count} problem{'s' if count != 1 else ''}"]
    lines += [f"  {p['path']}  [{p['rule']}] {p['message']}" for p in document["problems"]]
    lines += [f"  note {n['path']}  [{n['rule']}] {n['message']}" for n in document["notes"]]
    return "\n".join(lines)


def _render_diff(document: dict[str, Any]) -> str:
    if not document["changes"]:
        return "no changes"
    return "\n".join(f"{c['classification']:<22} {c['path']}  [{c['kind']}] {c['message']}"
                     for c in document["changes"])


@click.group("schema", cls=LazyGroup)
def schema_group() -> None:
    """Check, compare and fingerprint Avro schemas (no catalogue needed)."""


@schema_group.command("check")
@click.argument("reader", metavar="READER")
@click.argument("writer", metavar="WRITER")
@json_option
@click.pass_context
def check_command(ctx: click.Context, reader: str, writer: str, as_json: bool) -> None:
    """Can data written with WRITER be read with READER? Exit 0 if so, 1 if not."""
    resolution = resolve(read_schema(reader), read_schema(writer))
    emit(resolution_document(resolution), as_json, _render_resolution)
    if not resolution.compatible:
        ctx.exit(1)


@schema_group.command("diff")
@click.argument("old", metavar="OLD")
@click.argument("new", metavar="NEW")
@json_option
@click.pass_context
def diff_command(ctx: click.Context, old: str, new: str, as_json: bool) -> None:
    """Every change from OLD to NEW, each safe or breaking for readers or for writers.
    Exit 1 if any change is breaking."""
    changes: SchemaDiff = diff(read_schema(old), read_schema(new))
    document = {"changes": [{"path": c.path, "kind": c.kind, "message": c.message,
                             "classification": c.classification} for c in changes.changes]}
    emit(document, as_json, _render_diff)
    if changes.breaks_readers or changes.breaks_writers:
        ctx.exit(1)


@schema_group.command("fingerprint")
@click.argument("schema", metavar="SCHEMA")
@json_option
def fingerprint_command(schema: str, as_json: bool) -> None:
    """Parsing Canonical Form of SCHEMA with its CRC-64-AVRO and SHA-256 fingerprints."""
    result = fingerprint(read_schema(schema))
    document = {"canonical_form": result.canonical_form, "crc64_avro": result.crc64_avro,
                "sha256": result.sha256}
    emit(document, as_json, lambda d: "\n".join(f"{k}: {v}" for k, v in d.items()))
