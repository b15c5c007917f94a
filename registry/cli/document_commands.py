"""`lockkeeper document inspect` and `lockkeeper features check|diff`: no catalogue needed."""

from __future__ import annotations

import tomllib
from pathlib import Path
from typing import Any

import click

from registry.cli.files import read_file_bytes, read_file_text
from registry.cli.lazy_group import LazyGroup
from registry.cli.output import emit, json_option
from registry.cli.params import FilePath
from registry.cli.schema_commands import read_schema
from registry.documents import DocumentSummary, read_document
from registry.documents.pfa import CellSummary
from registry.errors import UserError
from registry.features import (
    FeatureCheck,
    FeatureDefinitions,
    FeatureDiff,
    check_features,
    diff_features,
    features_from_manifest,
    load_feature_definitions,
)
from registry.schema import Schema, fingerprint, to_json
from registry.schema.labels import type_label


def _read_manifest(path: str) -> dict[str, Any]:
    try:
        return tomllib.loads(read_file_text(path, "a manifest"))
    except tomllib.TOMLDecodeError as error:
        raise UserError(f"not valid TOML: {error}", place=path) from None


def _manifest_schema(manifest: dict[str, Any], key: str, manifest_path: str) -> Schema | None:
    value = manifest.get(key)
    if value is None:
        return None
    if not isinstance(value, str):
        raise UserError(f"{key} must be the path of a schema file",
                        place=f"{manifest_path} {key}")
    return read_schema(Path(manifest_path).parent / value)


def _load_definitions(path: str) -> FeatureDefinitions:
    """A definitions file, or a manifest that names one or holds a [features] table."""
    document = _read_manifest(path)
    if "input_schema" in document:  # a version manifest, not a definitions file
        definitions = features_from_manifest(document, manifest_path=path)
        assert definitions is not None
        return definitions
    return load_feature_definitions(path)


# --- document inspect ----------------------------------------------------------------------


def _schema_text(schema: Schema | None) -> Any:
    return None if schema is None else to_json(schema)


def _cell_document(cell: CellSummary) -> dict[str, Any]:
    return {"name": cell.name, "type": to_json(cell.type), "size": cell.size,
            "items": cell.items, "shared": cell.shared, "rollback": cell.rollback,
            "source": cell.source}


def _document_report(summary: DocumentSummary) -> dict[str, Any]:
    return {
        "kind": summary.kind,
        "digest": summary.digest,
        "size": summary.size,
        "canonical_size": summary.canonical_size,
        "name": summary.name,
        "method": summary.method,
        "input_schema": _schema_text(summary.input_schema),
        "input_fingerprint": fingerprint(summary.input_schema).sha256,
        "output_schema": _schema_text(summary.output_schema),
        "output_fingerprint": (fingerprint(summary.output_schema).sha256
                               if summary.output_schema is not None else None),
        "cells": [_cell_document(cell) for cell in summary.cells],
        "pools": [_cell_document(pool) for pool in summary.pools],
        "function_count": summary.function_count,
    }


def _render_document(report: dict[str, Any]) -> str:
    lines = [f"{report['kind']} document, {report['size']} bytes",
             f"digest   sha256:{report['digest']}"]
    if report["kind"] == "pfa":
        lines.append(f"name     {report['name'] or '(none)'}")
        lines.append(f"method   {report['method']}")
    lines.append(f"input    {type_label(report['input_schema'])}  "
                 f"(fingerprint sha256:{report['input_fingerprint'][:16]}...)")
    if report["output_schema"] is not None:
        lines.append(f"output   {type_label(report['output_schema'])}  "
                     f"(fingerprint sha256:{report['output_fingerprint'][:16]}...)")
    for section in ("cells", "pools"):
        for cell in report[section]:
            items = f", {cell['items']} items" if cell["items"] is not None else ""
            lines.append(f"{section[:-1]:<8} {cell['name']}: {type_label(cell['type'])}, "
                         f"{cell['size']} bytes{items}")
    if report["kind"] == "pfa":
        lines.append(f"functions {report['function_count']}")
    return "\n".join(lines)


@click.group("document", cls=LazyGroup)
def document_group() -> None:
    """Model documents: PFA documents and other artifacts."""


@document_group.command("inspect")
@click.argument("file", type=FilePath("a model document"))
@click.option("--manifest", "manifest_path", type=FilePath("a manifest"), default=None,
              help="A version manifest whose input_schema and output_schema must agree.")
@click.option("--kind", type=click.Choice(["pfa", "artifact"]), default=None,
              help="Read the file as this kind (default: PFA for .pfa, .pfa.json and .json).")
@json_option
def inspect_command(file: str, manifest_path: str | None, kind: str | None,
                    as_json: bool) -> None:
    """Check a document and show its digest, schemas, cells, pools and functions."""
    manifest_input = manifest_output = None
    if manifest_path is not None:
        manifest = _read_manifest(manifest_path)
        manifest_input = _manifest_schema(manifest, "input_schema", manifest_path)
        manifest_output = _manifest_schema(manifest, "output_schema", manifest_path)
    summary = read_document(read_file_bytes(file, "a model document"), filename=Path(file).name,
                            manifest_input=manifest_input, manifest_output=manifest_output,
                            kind=kind)  # type: ignore[arg-type]
    emit(_document_report(summary), as_json, _render_document)


# --- features check / diff -----------------------------------------------------------------


def _check_report(check: FeatureCheck) -> dict[str, Any]:
    return {"passed": check.passed, "fields": check.fields, "defined": check.defined,
            "missing": list(check.missing),
            "problems": [{"path": p.path, "rule": p.rule, "message": p.message}
                         for p in check.problems]}


def _render_check(report: dict[str, Any]) -> str:
    head = (f"passed: {report['defined']} of {report['fields']} leaf fields defined, consistent"
            if report["passed"] else
            f"failed: {len(report['problems'])} problem"
            f"{'s' if len(report['problems']) != 1 else ''} "
            f"({report['defined']} of {report['fields']} leaf fields defined)")
    return "\n".join([head] + [f"  {p['path']}: {p['rule']}: {p['message']}"
                               for p in report["problems"]])


def _diff_report(diff: FeatureDiff) -> dict[str, Any]:
    return {"verdict": diff.verdict, "breaking": diff.is_breaking,
            "changes": [{"path": c.path, "old_path": c.old_path, "change": c.change,
                         "severity": c.severity, "message": c.message, "before": c.before,
                         "after": c.after, "factor": c.factor, "offset": c.offset}
                        for c in diff.changes]}


def _render_diff(report: dict[str, Any]) -> str:
    lines = [f"verdict: {report['verdict']} ({len(report['changes'])} change"
             f"{'s' if len(report['changes']) != 1 else ''})"]
    for change in report["changes"]:
        renamed = (f" (was {change['old_path']})"
                   if change["old_path"] and change["old_path"] != change["path"] else "")
        lines.append(f"  {change['severity']:<12} {change['path']}{renamed}: "
                     f"{change['change']}: {change['message']}")
    return "\n".join(lines)


@click.group("features", cls=LazyGroup)
def features_group() -> None:
    """Feature definitions: units, domains and meaning of input fields."""


@features_group.command("check")
@click.argument("features", type=FilePath("feature definitions"))
@click.option("--schema", "schema_path", required=True, type=FilePath("a schema"),
              help="The input schema (.avsc) the definitions describe.")
@json_option
@click.pass_context
def check_command(ctx: click.Context, features: str, schema_path: str, as_json: bool) -> None:
    """Check coverage and consistency of definitions against an input schema (exit 1 if not)."""
    definitions = _load_definitions(features)
    check = check_features(definitions, read_schema(schema_path))
    emit(_check_report(check), as_json, _render_check)
    if not check.passed:
        ctx.exit(1)


@features_group.command("diff")
@click.argument("old", type=FilePath("feature definitions"))
@click.argument("new", type=FilePath("feature definitions"))
@click.option("--old-schema", type=FilePath("a schema"), default=None,
              help="Input schema of the old version (for renames through aliases).")
@click.option("--new-schema", type=FilePath("a schema"), default=None,
              help="Input schema of the new version.")
@json_option
@click.pass_context
def diff_command(ctx: click.Context, old: str, new: str, old_schema: str | None,
                 new_schema: str | None, as_json: bool) -> None:
    """Every change in meaning between two versions' definitions (exit 1 if any is breaking)."""
    if (old_schema is None) != (new_schema is None):
        raise UserError("give both --old-schema and --new-schema, or neither",
                        place="--old-schema" if old_schema is None else "--new-schema")
    diff = diff_features(_load_definitions(old),
                         read_schema(old_schema) if old_schema else None,
                         _load_definitions(new),
                         read_schema(new_schema) if new_schema else None)
    emit(_diff_report(diff), as_json, _render_diff)
    if diff.is_breaking:
        ctx.exit(1)


# `document get` fetches from a catalogue; its own module keeps the catalogue-free commands here
# light to import.
from registry.cli.document_get_commands import document_get  # noqa: E402

document_group.add_command(document_get)
