"""Commands on dataset files that need no catalogue: `dataset fingerprint` and `dataset compare`.

They and the catalogue's dataset commands form the `dataset` group of registry.cli's table.
"""

from __future__ import annotations

import gc
import os
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Any

import click

from registry.cli.files import read_file_text
from registry.cli.output import emit, json_option
from registry.cli.params import FilePath
from registry.cli.progress import dataset_progress
from registry.errors import UserError
from registry.schema.errors import SchemaError

CLUSTER_TIMEOUT = 10.0  # registry.datasets.workers.CLUSTER_TIMEOUT, kept here so --help is quick

FORMAT_CHOICE = click.Choice(["avro", "parquet", "csv"])


def load_schema(path: str | None) -> dict[str, Any] | None:
    """The Avro schema in an .avsc file, or None when no file was named."""
    if path is None:
        return None
    from registry.schema import parse
    from registry.schema.jsontext import decode

    # Parsed as `schema check` parses, so a broken or pathologically deep schema is one line
    # here too (the readers would otherwise meet it as a RecursionError).
    document = decode(read_file_text(path, "a schema"), path)
    try:
        parse(document)
    except SchemaError as error:
        raise error.with_source(path) from None
    from registry.datasets.types import MAX_NESTING
    from registry.nesting import nesting_depth

    if (depth := nesting_depth(document)) > MAX_NESTING:
        raise UserError(f"the schema nests {depth} levels deep; a dataset schema may nest at "
                        f"most {MAX_NESTING}", place=path)
    return document

def work_options(function: Callable[..., Any]) -> Callable[..., Any]:
    """--workers, --cluster and --cluster-timeout: where the fingerprinting runs."""
    function = click.option(
        "--cluster-timeout", "cluster_timeout", type=click.FloatRange(min=0.1),
        default=CLUSTER_TIMEOUT, show_default=True, metavar="SECONDS",
        help="How long to wait for the Dask scheduler to answer.")(function)
    function = click.option(
        "--cluster", "cluster", metavar="ADDRESS", default=None,
        help="Run on the Dask scheduler at ADDRESS (e.g. tcp://10.0.0.5:8786); needs the "
             "'dask' extra, and lockkeeper installed on the workers.")(function)
    return click.option(
        "--workers", "workers", type=int, default=None, metavar="N",
        help="Spread files and row groups over N local processes, one core each "
             "(default: this process, on two threads).")(function)


@dataclass(frozen=True)
class Work:
    """Where fingerprinting runs: the values of work_options."""

    workers: int | None = None
    cluster: str | None = None
    cluster_timeout: float = CLUSTER_TIMEOUT


def fingerprint_paths(paths: Sequence[str], schema_json: dict[str, Any] | None,
                      file_format: str | None, keys: tuple[str, ...] = (),
                      exclude: tuple[str, ...] = (), work: Work = Work()):
    """The fingerprint and source files of files, folders or globs, with a progress bar on a
    terminal. The heap is set aside from the garbage collector until the command's output is
    written (fingerprint_dataset says why)."""
    from registry.datasets import fingerprint_dataset
    from registry.pyarrow_probe import probe_without_pandas

    probe_without_pandas()  # before the plan: its workers fork with the answer
    click.get_current_context().call_on_close(gc.unfreeze)
    label = paths[0] if len(paths) == 1 else f"{len(paths)} paths"
    with dataset_progress(os.path.basename(label.rstrip("/")) or label) as progress:
        return fingerprint_dataset(
            paths, schema_json=schema_json, format=file_format, keys=keys, exclude=exclude,
            workers=work.workers, cluster=work.cluster, cluster_timeout=work.cluster_timeout,
            progress=progress, on_plan=progress.start if progress else None, set_heap_aside=True)


def is_saved_fingerprint(path: str) -> bool:
    """A .json file written by `dataset fingerprint --json`, rather than data."""
    return path.lower().endswith(".json") and os.path.isfile(path)


def fingerprint_path(path: str, schema_json: dict[str, Any] | None, file_format: str | None,
                     keys: tuple[str, ...] = (), exclude: tuple[str, ...] = (),
                     work: Work = Work()):
    """A dataset's fingerprint; a .json file written by `dataset fingerprint --json` is loaded."""
    from registry.datasets import load_fingerprint

    if is_saved_fingerprint(path):
        given = [option for option, value in (("--schema", schema_json), ("--format", file_format),
                                              ("--key", keys), ("--exclude", exclude)) if value]
        if given:  # a saved fingerprint was made with its own; these would be silently ignored
            raise UserError(f"{', '.join(given)} cannot apply to a saved fingerprint; give the "
                            "data file instead", place=given[0])
        return load_fingerprint(path)
    return fingerprint_paths([path], schema_json, file_format, keys, exclude, work).fingerprint


def file_or_catalogue_fingerprint(argument: str, schema_json: dict[str, Any] | None,
                                  work: Work = Work()):
    """A dataset's fingerprint (file, folder or glob), or, when no such file exists, a
    registered dataset's."""
    from registry.datasets.locations import is_glob
    from registry.names import NAME_PATTERN

    if os.path.lexists(argument) or is_glob(argument) or not NAME_PATTERN.fullmatch(argument):
        return fingerprint_path(argument, schema_json, None, work=work)
    from registry.service.datasets import fingerprint_of

    return fingerprint_of(click.get_current_context().obj.catalogue(), argument)


@click.command("fingerprint")
@click.argument("paths", nargs=-1, required=True, metavar="PATH...")
@click.option("--schema", "schema_path", type=FilePath("a schema"), metavar="AVSC",
              help="Avro schema to read the records with (required for CSV).")
@click.option("--format", "file_format", type=FORMAT_CHOICE,
              help="File format (default: from the extension or the first bytes).")
@click.option("--key", "keys", multiple=True, metavar="COL",
              help="Key column: left out of the feature digest and sketch (repeatable).")
@click.option("--exclude", "exclude", multiple=True, metavar="COL",
              help="Column to leave out of the feature digest and sketch, e.g. a label.")
@work_options
@json_option
def fingerprint_command(paths: tuple[str, ...], schema_path: str | None,
                        file_format: str | None, keys: tuple[str, ...],
                        exclude: tuple[str, ...], workers: int | None, cluster: str | None,
                        cluster_timeout: float, as_json: bool) -> None:
    """Fingerprint a dataset: content digest, schema fingerprint, profile and sketch.

    PATH is a file, a folder (every data file below it; `key=value` folders give fields), or a
    quoted glob; several may be given."""
    if len(paths) == 1 and is_saved_fingerprint(paths[0]):  # shown again, with its checks
        saved = fingerprint_path(paths[0], load_schema(schema_path), file_format, keys, exclude)
        emit(saved.to_dict(), as_json, render_fingerprint)
        return
    run = fingerprint_paths(paths, load_schema(schema_path), file_format, keys, exclude,
                            Work(workers, cluster, cluster_timeout))
    document = run.fingerprint.to_dict()
    document["sources"] = [source.to_dict() for source in run.sources]
    emit(document, as_json, render_fingerprint)


@click.command("compare")
@click.argument("reference", metavar="A")
@click.argument("current", metavar="B")
@click.option("--schema", "schema_path", type=FilePath("a schema"), metavar="AVSC",
              help="Avro schema to read both files with (required for CSV).")
@work_options
@json_option
def compare_command(reference: str, current: str, schema_path: str | None,
                    workers: int | None, cluster: str | None, cluster_timeout: float,
                    as_json: bool) -> None:
    """Compare dataset A (the reference) with B: record overlap and drift of every column.

    A and B are files, folders, quoted globs, or the names of registered datasets."""
    from registry.datasets import compare

    schema_json = load_schema(schema_path)
    work = Work(workers, cluster, cluster_timeout)
    comparison = compare(file_or_catalogue_fingerprint(reference, schema_json, work),
                         file_or_catalogue_fingerprint(current, schema_json, work))
    emit(comparison.to_dict(), as_json, render_comparison)


def render_fingerprint(document: dict[str, Any]) -> str:
    lines = [f"rows                {document['rows']}",
             f"content digest      {document['content_digest']}",
             f"feature digest      {document['feature_digest']}",
             f"schema fingerprint  {document['schema_fingerprint']}",
             f"distinct records    ~{document['sketch']['distinct_estimate']:.0f}"]
    if document.get("key_digest"):
        lines.append(f"key digest          {document['key_digest']}")
    if len(document.get("sources") or ()) > 1:
        lines.append(f"files               {len(document['sources'])}")
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

