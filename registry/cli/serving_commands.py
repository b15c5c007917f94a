"""`lockkeeper serving record|outcomes|report`: evidence after release."""

from __future__ import annotations

import os
from typing import Any

import click

from registry.cli.catalogue_commands import _client
from registry.cli.dataset_commands import FORMAT_CHOICE
from registry.cli.output import emit, json_option
from registry.cli.progress import progress_bar
from registry.errors import LockkeeperError


@click.group("serving")
def serving() -> None:
    """What serving systems served, the outcomes that arrive later, and the report on both."""


def _total_rows(path: str) -> int | None:
    try:
        import pyarrow.parquet as pq

        return pq.ParquetFile(path).metadata.num_rows
    except Exception:  # not Parquet: the progress counts rows instead
        return None


@serving.command("record")
@click.argument("model_name", metavar="MODEL")
@click.argument("files", metavar="FILE...", nargs=-1, required=True,
                type=click.Path(dir_okay=False))
@click.option("--schema", "schema_path", type=click.Path(dir_okay=False), metavar="AVSC",
              help="Avro schema of the batch's columns (required for CSV).")
@click.option("--format", "file_format", type=FORMAT_CHOICE, default=None)
@json_option
def record(model_name: str, files: tuple[str, ...], schema_path: str | None,
           file_format: str | None, as_json: bool) -> None:
    """Record a batch of served rows: row_id, served_at, version, the prediction, inputs.

    Several files are recorded in turn, each its own batch (the next is read while one is
    written). A refused file ends the command: the files before it stay recorded, and sending
    them again changes nothing."""
    label = os.path.basename(files[0]) if len(files) == 1 else f"{len(files)} batches"
    totals = [_total_rows(file) for file in files]
    total = None if None in totals else sum(t for t in totals if t is not None)
    kept: list[dict[str, Any]] = []
    with progress_bar(label, total) as progress:
        try:
            for answer in _client().record_served_batches(
                    model_name, list(files), schema=schema_path, file_format=file_format,
                    progress=progress):
                kept.append(answer.to_json())
        except LockkeeperError as error:
            if len(files) > 1:
                _name_the_file(error, files[len(kept)], len(kept))
            raise
    if len(files) == 1:
        emit(kept[0], as_json, _batch_line)
        return
    document = {"model": kept[0]["model"],
                "batches": [{"file": file, **batch} for file, batch in zip(files, kept,
                                                                           strict=True)],
                "recorded": sum(1 for batch in kept if batch["recorded"]),
                "rows": sum(batch["rows"] for batch in kept if batch["recorded"])}
    emit(document, as_json, lambda d: "\n".join(
        f"{batch['file']}: {_batch_line(batch)}" for batch in d["batches"]))


def _batch_line(o: dict[str, Any]) -> str:
    if not o["recorded"]:
        return f"already recorded (nothing changed): batch {o['digest'][:12]}, {o['rows']} rows"
    shown = ", ".join(f"v{w['version']} {w['window'][:10]} {w['rows']}"
                      for w in o["windows"][:6])
    more = f" and {len(o['windows']) - 6} more" if len(o["windows"]) > 6 else ""
    return (f"recorded {o['rows']} served rows of {o['model']} "
            f"(batch {o['digest'][:12]}): {shown}{more}")


def _name_the_file(error: LockkeeperError, file: str, before: int) -> None:
    """Among several files, the error says which one, and that those before it are kept."""
    error.place = f"{file}, {error.place}" if error.place else file
    if before:
        error.message = (f"{error.message} (the {before} file{'s' if before > 1 else ''} "
                         f"before it {'are' if before > 1 else 'is'} recorded; sending "
                         f"{'them' if before > 1 else 'it'} again changes nothing)")


@serving.command("outcomes")
@click.argument("model_name", metavar="MODEL")
@click.argument("file", type=click.Path(dir_okay=False))
@click.option("--format", "file_format", type=FORMAT_CHOICE, default=None)
@json_option
def outcomes(model_name: str, file: str, file_format: str | None, as_json: bool) -> None:
    """Record outcomes (row_id, label, optionally observed_at) of rows served earlier."""
    outcome = _client().record_outcomes(model_name, file, file_format=file_format)

    def text(o: dict[str, Any]) -> str:
        if not o["recorded"]:
            return f"already recorded (nothing changed): batch {o['digest'][:12]}"
        return (f"recorded {o['rows']} outcomes of {o['model']}: {o['joined']} joined served "
                f"rows, {o['unknown_rows']} for rows never served (counted, not kept)")

    emit(outcome, as_json, text)


@serving.command("report")
@click.argument("model_name", metavar="MODEL")
@click.option("--version", "version", default=None, metavar="N",
              help="Only this version (N or vN).")
@click.option("--since", default=None, metavar="T", help="From this date or time (ISO 8601).")
@click.option("--window", default=None, metavar="W",
              help="Window of the report, a multiple of the policy's (default: the policy's, 1d).")
@json_option
def report(model_name: str, version: str | None, since: str | None, window: str | None,
           as_json: bool) -> None:
    """Per window and version: rows, drift, shadow agreement, live quality and the state."""
    number = _version_number(version) if version is not None else None
    document = _client().serving_report(model_name, version=number, since=since, window=window)
    emit(document, as_json, render_report)


def _version_number(text: str) -> int:
    from registry.errors import UserError

    digits = text[1:] if text.lower().startswith("v") else text
    if not digits.isdigit():
        raise UserError(f"a version is a number such as 2 or v2, not {text!r}", place="--version")
    return int(digits)


def render_report(document: dict[str, Any]) -> str:
    lines = [f"{document['model']} after release ({document['task']}, windows of "
             f"{document['window']}):"]
    for number, found in document["versions"].items():
        lines.append(f"  v{number}: {found['state']} ({found['rows']} rows served)")
        lines += [f"      {reason}" for reason in found["reasons"]]
    if not document["windows"]:
        lines.append("  nothing served yet")
    for window in document["windows"]:
        for entry in window["versions"]:
            worst = max(entry["input_drift"].items(), key=lambda i: i[1]["psi"], default=None)
            drift = (f"largest PSI {worst[1]['psi']:.3f} ({worst[0]})" if worst else "no inputs")
            parts = [f"{window['start'][:10]} v{entry['version']}: {entry['rows']} rows",
                     drift]
            if "agreement" in entry:
                a = entry["agreement"]
                share = a["share_agreeing"]
                parts.append(f"agrees with v{a['against']} on "
                             f"{'-' if share is None else f'{share:.1%}'} of {a['rows']}")
            if "quality" in entry and entry["quality"]["value"] is not None:
                q = entry["quality"]
                parts.append(f"live {q['metric']} {q['value']:.3f}")
            parts.append(entry["state"])
            lines.append("  " + "; ".join(parts))
    o = document["outcomes"]
    lines.append(f"  outcomes: {o['rows']} received, {o['joined']} joined, "
                 f"{o['unknown_rows']} for rows never served")
    return "\n".join(lines)


