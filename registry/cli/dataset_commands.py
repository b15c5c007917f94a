"""Commands on dataset files that need no catalogue: `dataset fingerprint` and `dataset compare`.

The `dataset` group is exposed so the catalogue commands (add, show, recall) can join it.
"""

from __future__ import annotations

import json
import os
import sys
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from typing import Any

import click

from registry.cli.output import emit, json_option, stderr_is_terminal
from registry.errors import UserError

FORMAT_CHOICE = click.Choice(["avro", "parquet", "csv"])


@click.group("dataset")
def dataset() -> None:
    """Fingerprint and compare datasets."""


def load_schema(path: str | None) -> dict[str, Any] | None:
    """The Avro schema in an .avsc file, or None when no file was named."""
    if path is None:
        return None
    try:
        with open(path, encoding="utf-8") as handle:
            return json.load(handle)
    except FileNotFoundError:
        raise UserError("no such schema file", place=path) from None
    except (json.JSONDecodeError, UnicodeDecodeError) as error:
        raise UserError(f"the schema file is not JSON ({error})", place=path) from error


@contextmanager
def progress_reporter(label: str, total: int | None) -> Iterator[Callable[[int], None] | None]:
    """A progress bar on stderr, only when stderr is a terminal (never in pipes or CI logs)."""
    if not stderr_is_terminal():
        yield None
        return
    stderr = sys.stderr  # not click.get_text_stream, which click deprecates
    if total is None:  # Avro and CSV files do not say how many rows they hold: count them
        done = 0

        def count(rows: int) -> None:
            nonlocal done
            done += rows
            click.echo(f"\r{label}  {done:,} rows", file=stderr, nl=False)

        yield count
        click.echo("", file=stderr)
        return
    with click.progressbar(length=total, label=label, file=stderr, show_pos=True) as bar:
        yield bar.update


def fingerprint_path(path: str, schema_json: dict[str, Any] | None, file_format: str | None,
                     keys: tuple[str, ...] = (), exclude: tuple[str, ...] = ()):
    """A file's fingerprint; a .json file written by `dataset fingerprint --json` is loaded."""
    from registry.datasets import fingerprint_file, load_fingerprint
    from registry.datasets.readers import open_source

    if path.lower().endswith(".json") and os.path.isfile(path):
        return load_fingerprint(path)
    total = open_source(path, schema_json, file_format).total_rows
    with progress_reporter(os.path.basename(path), total) as progress:
        return fingerprint_file(path, schema_json=schema_json, format=file_format, keys=keys,
                                exclude=exclude, progress=progress)


def file_or_catalogue_fingerprint(argument: str, schema_json: dict[str, Any] | None):
    """A file's fingerprint, or, when no such file exists, a registered dataset's."""
    if os.path.exists(argument):
        return fingerprint_path(argument, schema_json, None)
    from registry.names import NAME_PATTERN
    from registry.service.datasets import fingerprint_of

    if not NAME_PATTERN.fullmatch(argument):
        raise UserError("no such file", place=argument)
    return fingerprint_of(click.get_current_context().obj.catalogue(), argument)


@dataset.command("fingerprint")
@click.argument("file", type=click.Path(dir_okay=False))
@click.option("--schema", "schema_path", type=click.Path(dir_okay=False), metavar="AVSC",
              help="Avro schema to read the records with (required for CSV).")
@click.option("--format", "file_format", type=FORMAT_CHOICE,
              help="File format (default: from the extension or the first bytes).")
@click.option("--key", "keys", multiple=True, metavar="COL",
              help="Key column: left out of the feature digest and sketch (repeatable).")
@click.option("--exclude", "exclude", multiple=True, metavar="COL",
              help="Column to leave out of the feature digest and sketch, e.g. a label.")
@json_option
def fingerprint_command(file: str, schema_path: str | None, file_format: str | None,
                        keys: tuple[str, ...], exclude: tuple[str, ...], as_json: bool) -> None:
    """Fingerprint a dataset file: content digest, schema fingerprint, profile and sketch."""
    found = fingerprint_path(file, load_schema(schema_path), file_format, keys, exclude)
    emit(found.to_dict(), as_json, render_fingerprint)


@dataset.command("compare")
@click.argument("reference", type=click.Path(dir_okay=False), metavar="A")
@click.argument("current", type=click.Path(dir_okay=False), metavar="B")
@click.option("--schema", "schema_path", type=click.Path(dir_okay=False), metavar="AVSC",
              help="Avro schema to read both files with (required for CSV).")
@json_option
def compare_command(reference: str, current: str, schema_path: str | None,
                    as_json: bool) -> None:
    """Compare dataset A (the reference) with B: record overlap and drift of every column.

    A and B are files, or the names of registered datasets."""
    from registry.datasets import compare

    schema_json = load_schema(schema_path)
    comparison = compare(file_or_catalogue_fingerprint(reference, schema_json),
                         file_or_catalogue_fingerprint(current, schema_json))
    emit(comparison.to_dict(), as_json, render_comparison)


def render_fingerprint(document: dict[str, Any]) -> str:
    lines = [f"rows                {document['rows']}",
             f"content digest      {document['content_digest']}",
             f"feature digest      {document['feature_digest']}",
             f"schema fingerprint  {document['schema_fingerprint']}",
             f"distinct records    ~{document['sketch']['distinct_estimate']:.0f}"]
    if document.get("key_digest"):
        lines.append(f"key digest          {document['key_digest']}")
    lines.append("")
    lines.append(f"{'column':<26} {'type':<8} {'nulls':>7}  summary")
    for name, column in document["profile"].items():
        lines.append(f"{name:<26} {column['type']:<8} {column['nulls']:>7}  "
                     f"{_column_summary(column)}")
    return "\n".join(lines)


def _column_summary(column: dict[str, Any]) -> str:
    if "mean" in column and column["mean"] is not None:
        quantiles = column.get("quantiles") or {}
        return (f"min {column['min']:g}  median {quantiles.get('0.5', float('nan')):g}  "
                f"max {column['max']:g}  mean {column['mean']:.4g}  "
                f"sd {(column['variance'] or 0) ** 0.5:.4g}")
    if "categories" in column:
        counts = column["categories"]["counts"]
        shown = ", ".join(f"{value} {count}" for value, count in list(counts.items())[:5])
        more = "" if len(counts) <= 5 else f", ... ({len(counts)} listed)"
        exact = "" if column["categories"]["exact"] else " (heavy hitters)"
        return f"{shown}{more}{exact}"
    return ""


def render_comparison(document: dict[str, Any]) -> str:
    overlap = document["overlap"]
    lines = [f"jaccard       {overlap['jaccard']:.4f} (+/- {overlap['jaccard_error_bound']:.4f})",
             f"containment   {overlap['containment']:.4f} of B's records also in A "
             f"(+/- {overlap['containment_error_bound']:.4f})",
             f"intersection  ~{overlap['intersection']:.0f} records", "",
             f"{'column':<26} {'psi':>8}  level  detail"]
    for name, drift in document["drift"].items():
        if "ks_statistic" in drift:
            detail = f"ks {drift['ks_statistic']:.4f} (p {drift['ks_p_value']:.3g})"
        else:
            detail = f"js {drift['jensen_shannon']:.4f}  l-inf {drift['l_infinity']:.4f}"
            if drift.get("missing_categories"):
                detail += f"  missing {', '.join(drift['missing_categories'])}"
        lines.append(f"{name:<26} {drift['psi']:>8.4f}  {drift['level']:<5}  {detail}")
    return "\n".join(lines)


COMMANDS = [dataset]
