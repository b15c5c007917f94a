"""Reading and checking one served batch: every row is checked before anything is kept.

A batch (Parquet, Avro container, or CSV read under a given schema) has `row_id`, `served_at`
(a timestamp), `version`, the prediction in the form `lockkeeper metrics` reads (`score`,
`prediction`, or one `p_<class>` column per class), and optionally input fields named as in
the version's input schema. A bad row refuses the whole batch, naming its row and column; a good
batch becomes, per version and window, a mergeable summary and the compact columns of its rows.
"""

from __future__ import annotations

from collections import deque
from collections.abc import Callable, Iterator, Mapping
from concurrent.futures import Future, ThreadPoolExecutor
from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.parquet as pq

from registry.after_release import compact
from registry.after_release.row_ids import first_repeat, hash_row_ids
from registry.after_release.summaries import WindowSummary, merge_summaries
from registry.after_release.timeline import Spell
from registry.after_release.windows import iso, window_starts
from registry.datasets.allocation import reuse_large_blocks
from registry.datasets.errors import ColumnsNotMatching, ValueNotParsing, cell
from registry.datasets.profile import profile_of
from registry.datasets.readers import (
    _avro_writer_schema,
    _first_failure,
    guess_format,
    open_source,
    read_batches,
)
from registry.datasets.types import RecordType, ValueType
from registry.errors import UserError
from registry.thread_pools import shared_pool

KEY_COLUMNS = ("row_id", "served_at", "version")
CLASS_PREFIX = "p_"
TIME_UNITS = {"timestamp-millis": 1000, "timestamp-micros": 1}
SCORE = ValueType("double")


@dataclass(frozen=True)
class VersionFacts:
    """What the checks need of one version: its input fields, its task (from its evaluation,
    None when it has none), its classes (multiclass) and when it held a serving stage."""

    number: int
    input_record: RecordType
    task: str | None
    classes: tuple[str, ...] = ()
    spells: tuple[Spell, ...] = ()
    entered_first_stage_at: int | None = None  # microseconds, the registration


@dataclass(frozen=True)
class ServingContext:
    model: str
    versions: Mapping[int, VersionFacts]
    window_seconds: int
    serving_stages: tuple[str, ...]


@dataclass
class WindowRows:
    """One version's rows in one window of the batch: the summary and the compact columns."""

    summary: WindowSummary
    hashes: list[np.ndarray] = field(default_factory=list)
    predictions: dict[str, list[np.ndarray]] = field(default_factory=dict)

    def columns(self) -> dict[str, np.ndarray]:
        document = {"row_hash": _joined(self.hashes)}
        document.update({name: _joined(parts) for name, parts in self.predictions.items()})
        return document


def _joined(parts: list[np.ndarray]) -> np.ndarray:
    return parts[0] if len(parts) == 1 else np.concatenate(parts)  # one part: no copy


@dataclass(frozen=True)
class CheckedBatch:
    rows: int
    task: str
    prediction_columns: tuple[str, ...]
    groups: Mapping[tuple[int, int], WindowRows]  # (version, window start) -> rows
    # each group's compact rows (compact.py), encoded part by part while the batch was read
    contents: Mapping[tuple[int, int], Future[bytes]] = field(default_factory=dict)
    # the search for a row id repeated within a version (read_served_batch's repeats_later)
    repeats: Future[None] | None = None

    def refuse_repeated_ids(self) -> None:
        """Raise the refusal of the first row id repeated within a version, if there is one."""
        if self.repeats is not None:
            self.repeats.result()


# --- the file's columns ----------------------------------------------------------------------

def _file_columns(path: str, format: str, schema_json: Mapping[str, Any] | None
                  ) -> dict[str, Any]:
    """Column name -> its type as the file declares it (an Arrow type for Parquet, an Avro
    type for Avro and for CSV read under --schema)."""
    if format == "parquet":
        try:
            schema = pq.read_schema(path)
        except (pa.ArrowException, OSError) as error:
            raise UserError(f"not a Parquet file, or truncated ({error})", place=path) from None
        return {f.name: f.type for f in schema}
    if format == "avro":
        writer = schema_json if schema_json is not None else _avro_writer_schema(path)
        return {f["name"]: f["type"] for f in writer.get("fields", [])}
    if schema_json is None:
        raise UserError("a CSV batch needs an Avro schema to type its columns", place="--schema")
    if schema_json.get("type") != "record":
        raise UserError("the schema of a batch must be an Avro record", place="--schema")
    return {f["name"]: f["type"] for f in schema_json.get("fields", [])}


def prediction_columns(names: list[str]) -> tuple[str, tuple[str, ...]]:
    """The task the prediction columns say, and those columns."""
    classes = tuple(n for n in names if n.startswith(CLASS_PREFIX))
    forms = [form for form, present in (("binary", "score" in names),
                                        ("regression", "prediction" in names),
                                        ("multiclass", bool(classes))) if present]
    if not forms:
        raise ColumnsNotMatching("the batch has no prediction: give `score` (binary), "
                                 "`prediction` (regression) or one `p_<class>` column per class "
                                 "(multiclass)", place="columns")
    if len(forms) > 1:
        raise ColumnsNotMatching(f"the batch gives predictions of several forms "
                                 f"({', '.join(forms)}); send one form per batch",
                                 place="columns")
    task = forms[0]
    if task == "multiclass" and len(classes) < 2:
        raise ColumnsNotMatching("a multiclass prediction needs one p_<class> column per class, "
                                 "at least two", place=f"column {classes[0]}")
    return task, {"binary": ("score",), "regression": ("prediction",)}.get(task, classes)


def _plain_avro(avro: Any) -> Any:
    """A nullable union's one branch: nulls in key columns are refused row by row anyway."""
    if isinstance(avro, list):
        branches = [b for b in avro if b != "null"]
        return branches[0] if len(branches) == 1 else avro
    return avro


def _time_type(declared: Any, format: str) -> Any:
    if format == "parquet":
        if pa.types.is_timestamp(declared):
            return {"type": "long", "logicalType": "timestamp-micros"}
        if pa.types.is_string(declared) or pa.types.is_large_string(declared):
            return "string"
    else:
        declared = _plain_avro(declared)
        if declared == "string":
            return "string"
        if isinstance(declared, Mapping) and declared.get("logicalType") in TIME_UNITS:
            return dict(declared)
    raise ColumnsNotMatching("served_at must be a timestamp (Parquet timestamp, Avro long with "
                             "logicalType timestamp-millis or timestamp-micros, or ISO 8601 "
                             "text)", place="column served_at")


def _row_id_type(declared: Any, format: str) -> str:
    if format == "parquet":
        if pa.types.is_integer(declared):
            return "long"
        if pa.types.is_string(declared) or pa.types.is_large_string(declared) or \
                pa.types.is_dictionary(declared):
            return "string"
    elif _plain_avro(declared) in ("string", "int", "long"):
        return "long" if _plain_avro(declared) in ("int", "long") else "string"
    raise ColumnsNotMatching("row_id must be a string or an integer", place="column row_id")


def _input_fields(names: list[str], context: ServingContext) -> dict[str, Any]:
    """Each input column's Avro type, from the newest serving version whose input schema has
    the field (every version when none has served yet, so the row checks say so)."""
    serving = [f for f in context.versions.values() if f.spells] or list(
        context.versions.values())
    types: dict[str, Any] = {}
    for name in names:
        owners = [f for f in sorted(serving, key=lambda f: -f.number)
                  if name in f.input_record.names]
        if not owners:
            shown = ", ".join(f"v{f.number}" for f in sorted(serving, key=lambda f: f.number))
            raise ColumnsNotMatching(
                f"{name!r} is neither a served column ({', '.join(KEY_COLUMNS)}, the "
                f"prediction) nor a field of the input schema of {shown or 'any version'}",
                place=f"column {name}")
        schema_field = next(f for f in owners[0].input_record.schema_json["fields"]
                            if f["name"] == name)
        types[name] = schema_field["type"]
    return types


def served_schema(path: str, format: str, schema_json: Mapping[str, Any] | None,
                  context: ServingContext) -> tuple[dict[str, Any], str, tuple[str, ...],
                                                    tuple[str, ...]]:
    """The Avro schema a batch is read under, its task, prediction and input columns."""
    declared = _file_columns(path, format, schema_json)
    for name in KEY_COLUMNS:
        if name not in declared:
            raise ColumnsNotMatching(f"the batch has no column {name!r}", place=f"column {name}")
    names = list(declared)
    task, predicted = prediction_columns(names)
    inputs = [n for n in names if n not in KEY_COLUMNS and n not in predicted]
    input_types = _input_fields(inputs, context)
    fields = [
        {"name": "row_id", "type": _row_id_type(declared["row_id"], format)},
        {"name": "served_at", "type": _time_type(declared["served_at"], format)},
        {"name": "version", "type": "long"},
        *({"name": n, "type": "double"} for n in predicted),
        *({"name": n, "type": input_types[n]} for n in inputs),
    ]
    schema: dict[str, Any] = {"type": "record", "name": "ServedRow", "fields": fields}
    if format == "avro":  # Avro resolution matches records by name: take the writer's
        writer = schema_json if schema_json is not None else _avro_writer_schema(path)
        schema.update({k: writer[k] for k in ("name", "namespace") if k in writer})
    return schema, task, predicted, tuple(inputs)


# --- the row checks --------------------------------------------------------------------------

def _micros_of(array: pa.Array, value_type: ValueType, first_row: int) -> np.ndarray:
    if value_type.avro == "string":
        attempt = lambda part: _parse_times(part)  # noqa: E731
        try:
            return attempt(array)
        except (pa.ArrowInvalid, pa.ArrowNotImplementedError):
            row = _first_failure(array, attempt) or 0
            raise ValueNotParsing(f"{array[row].as_py()!r} is not an ISO 8601 time",
                                  place=cell(first_row + row + 1, "served_at")) from None
    values = array.to_numpy(zero_copy_only=False).astype(np.int64, copy=False)
    factor = TIME_UNITS.get(value_type.logical, 1)
    return values * factor if factor != 1 else values


def _parse_times(array: pa.Array) -> np.ndarray:
    try:
        parsed = pc.cast(array, pa.timestamp("us", tz="UTC"))
    except pa.ArrowInvalid:
        parsed = pc.cast(array, pa.timestamp("us"))  # no offset: taken as UTC
    return parsed.cast(pa.int64()).to_numpy(zero_copy_only=False)


def _first(mask: np.ndarray) -> int:
    return int(np.argmax(mask))


def distinct(values: np.ndarray) -> list[int]:
    """The distinct values, sorted; a batch mostly holds one version and one window, and its
    windows mostly come in order of time (then no sort is needed)."""
    if len(values) == 0:
        return []
    low, high = int(values.min()), int(values.max())
    if low == high:
        return [low]
    changes = values[1:] != values[:-1]
    if values[0] == low and values[-1] == high and bool((values[1:] >= values[:-1]).all()):
        return values[np.concatenate([[True], changes])].tolist()
    return np.unique(values).tolist()


def _check_versions(versions: np.ndarray, micros: np.ndarray, first_row: int,
                    context: ServingContext) -> None:
    for number in distinct(versions):
        rows = versions == number
        facts = context.versions.get(number)
        if facts is None:
            raise UserError(f"{context.model} has no version {number}",
                            place=cell(first_row + _first(rows) + 1, "version"))
        if not facts.spells:
            raise UserError(f"v{number} never served: it never held a serving stage "
                            f"({', '.join(context.serving_stages)})",
                            place=cell(first_row + _first(rows) + 1, "version"))
        inside = np.zeros(len(micros), np.bool_)
        for spell in facts.spells:
            inside |= (micros >= spell.start) & (
                micros < (spell.end if spell.end is not None else np.iinfo(np.int64).max))
        outside = rows & ~inside
        if outside.any():
            row = _first(outside)
            moment = int(micros[row])
            first = facts.spells[0]
            if moment < first.start:
                why = (f"before v{number} held any stage that serves (it entered "
                       f"{first.stages[0]} at {iso(first.start, micros=True)})")
            else:
                why = f"when v{number} held no stage that serves"
            raise UserError(f"served at {iso(moment, micros=True)}, {why}",
                            place=cell(first_row + row + 1, "served_at"))


def _check_predictions(batch: pa.RecordBatch, task: str, predicted: tuple[str, ...],
                       first_row: int) -> dict[str, np.ndarray]:
    scores = {}
    for name in predicted:
        values = batch.column(name).to_numpy(zero_copy_only=False).astype(np.float64,
                                                                         copy=False)
        if task == "regression":
            bad = ~np.isfinite(values)
        else:  # NaN compares false: outside [0, 1] too
            bad = ~((values >= 0) & (values <= 1))
        if bad.any():
            row = _first(bad)
            need = "a finite number" if task == "regression" else "a probability in [0, 1]"
            raise ValueNotParsing(f"{float(values[row])!r} is not {need} ({task} task)",
                                  place=cell(first_row + row + 1, name))
        scores[name] = values
    return scores


def _check_task(task: str, predicted: tuple[str, ...], numbers: list[int],
                context: ServingContext) -> None:
    for number in numbers:
        facts = context.versions[number]
        if facts.task is not None and facts.task != task:
            raise ColumnsNotMatching(f"v{number} was evaluated as a {facts.task} task; its "
                                     f"rows need the prediction columns of that task",
                                     place=f"column {predicted[0]}")
        if task == "multiclass" and facts.classes:
            given = tuple(n[len(CLASS_PREFIX):] for n in predicted)
            if set(given) != set(facts.classes):
                raise ColumnsNotMatching(f"v{number} predicts the classes "
                                         f"{', '.join(facts.classes)}; the batch gives "
                                         f"{', '.join(given)}", place="columns")


# --- reading ---------------------------------------------------------------------------------

def read_served_batch(path: str, context: ServingContext, *, format: str | None = None,
                      schema_json: Mapping[str, Any] | None = None,
                      progress: Callable[[int], None] | None = None,
                      repeats_later: bool = False) -> CheckedBatch:
    """Check every row of a batch and summarise it per version and window, or raise the
    first fault, naming its row and column; nothing is kept of a refused batch.

    With `repeats_later` the search for repeated row ids, which needs every row, runs on a
    thread after the last row is read, and the caller raises its finding with
    `refuse_repeated_ids` before it keeps anything (while it writes the batch, say).

    Record batches are checked on two threads (numpy, numba and Arrow let go of the GIL) while
    a third reads ahead; their parts are merged in file order, so the first fault reported is
    the first in the file and the result is the same on every run."""
    reuse_large_blocks()  # the arrays of each record batch serve the next one
    format = format or guess_format(path)
    open_source(path, {"type": "record", "name": "Probe", "fields": []}, format)  # not empty
    schema, task, predicted, inputs = served_schema(path, format, schema_json, context)
    # Text inputs are profiled by their Parquet dictionary, never spelt out row by row (not
    # the row ids: each is distinct, so their dictionary would be as long as the column).
    source = open_source(path, schema, format)
    source = replace(source, dictionaries=tuple(
        name for name in inputs if source.record.field(name).avro in ("string", "enum")))
    record = source.record
    groups: dict[tuple[int, int], WindowRows] = {}
    seen: dict[int, list[tuple[np.ndarray, int, np.ndarray | None]]] = {}
    repeats = _Repeats()
    encoders: dict[tuple[int, int], compact.StreamEncoder] = {}
    written: dict[tuple[int, int], list[Future]] = {}
    rows = 0
    pending: deque[Future] = deque()

    def merge_oldest() -> None:
        nonlocal rows
        part_rows, part_groups, part_seen = pending.popleft().result()
        for key, held in part_groups.items():
            # the part's compact rows, encoded on a thread of their own in file order
            encoder = encoders.setdefault(key, compact.StreamEncoder())
            written.setdefault(key, []).append(
                _encoding().submit(encoder.write, held.columns()))
            if key in groups:
                groups[key].summary = merge_summaries(groups[key].summary, held.summary)
                groups[key].hashes += held.hashes
                for name, values in held.predictions.items():
                    groups[key].predictions.setdefault(name, []).extend(values)
            else:
                groups[key] = held
        for number, parts in part_seen.items():
            seen.setdefault(number, []).extend(parts)
            for hashes, _, _ in parts:
                repeats.add(number, hashes)
        rows += part_rows
        if progress is not None:
            progress(part_rows)

    try:
        decoded = read_batches(source, batch_rows=DECODE_ROWS.get(format, PART_ROWS))
        for first_row, batch in _parts(_read_ahead(decoded)):
            pending.append(shared_pool("served-batch", WORKERS).submit(
                _check_part, first_row, batch, record, task, predicted, inputs, context))
            while len(pending) > WORKERS:
                merge_oldest()
        while pending:
            merge_oldest()
    finally:
        for future in pending:
            future.cancel()
    searching = shared_pool("served-ids").submit(_refuse_duplicates, seen, repeats, context)
    if not repeats_later:
        searching.result()
    contents = {key: _encoding().submit(_finished, encoder, written[key])
                for key, encoder in encoders.items()}
    return CheckedBatch(rows=rows, task=task, prediction_columns=predicted, groups=groups,
                        contents=contents, repeats=searching)


WORKERS = 2
# Rows per part checked on a worker: each part's summary is merged on the calling thread, so
# parts of 2^16 rows spent more time merging (16 merges of nine profiles per million rows) than
# they gained in overlap; memory stays bounded by a few parts.
PART_ROWS = 1 << 18
# Rows decoded at a time. pyarrow decodes a Parquet batch's columns on all cores, so a long
# batch decodes at read_table's pace (one 2^20-row batch of the benchmark's files: 57 ms
# where four of 2^18 rows took 63 ms and, one after another with the checks waiting on each,
# 160 ms); its parts are then checked on the workers while the next batch decodes.
DECODE_ROWS = {"parquet": 1 << 20}


def _parts(batches: Iterator[tuple[int, pa.RecordBatch]]
           ) -> Iterator[tuple[int, pa.RecordBatch]]:
    """Each decoded batch as parts of at most PART_ROWS rows (views, not copies)."""
    for first_row, batch in batches:
        for start in range(0, batch.num_rows, PART_ROWS):
            yield first_row + start, batch.slice(start, PART_ROWS)


def _check_part(first_row: int, batch: pa.RecordBatch, record: RecordType, task: str,
                predicted: tuple[str, ...], inputs: tuple[str, ...], context: ServingContext):
    """One record batch checked and summarised: (rows, groups, row hashes per version)."""
    micros = _micros_of(batch.column("served_at"), record.field("served_at"), first_row)
    versions = batch.column("version").to_numpy(zero_copy_only=False)
    _check_versions(versions, micros, first_row, context)
    numbers = distinct(versions)
    _check_task(task, predicted, numbers, context)
    scores = _check_predictions(batch, task, predicted, first_row)
    hashes = hash_row_ids(batch.column("row_id"))
    starts = _window_starts(micros, context.window_seconds)
    seen: dict[int, list[tuple[np.ndarray, int, np.ndarray | None]]] = {}
    for number in numbers:
        if len(numbers) == 1:
            seen[number] = [(hashes, first_row, None)]
        else:
            positions = np.flatnonzero(versions == number)
            seen[number] = [(hashes[positions], first_row, positions)]
    groups: dict[tuple[int, int], WindowRows] = {}
    _add_groups(groups, batch, record, task, inputs, context, versions, starts, micros, hashes,
                scores, numbers)
    return batch.num_rows, groups, seen


def _read_ahead(batches):
    """The next batch is decoded on a thread of its own while this one is checked (at most
    two wait, so memory stays bounded by a few batches)."""
    from registry.datasets.fingerprint import read_ahead

    return read_ahead(batches)


def _window_starts(micros: np.ndarray, seconds: int) -> np.ndarray:
    """Each row's window start, or (as a batch mostly lies in one window) that one start alone
    when its first and last times share a window: a window of rows served in order."""
    if len(micros):
        first, last = window_starts(np.array([micros.min(), micros.max()]), seconds)
        if first == last:
            return np.array([first])
    return window_starts(micros, seconds)


def _add_groups(groups, batch, record, task, inputs, context, versions, starts, micros, hashes,
                scores, numbers) -> None:
    window_list = distinct(starts)  # one start alone stands for every row (it broadcasts)
    for number in numbers:
        facts = context.versions[number]
        own_inputs = [n for n in inputs if n in facts.input_record.names]
        for start in window_list:
            chosen: np.ndarray | slice | None
            if len(numbers) == 1 and len(window_list) == 1:
                chosen = None  # the whole batch: no copy
            else:
                chosen = np.flatnonzero((versions == number) & (starts == start))
                if len(chosen) == 0:
                    continue
                if int(chosen[-1]) - int(chosen[0]) + 1 == len(chosen):
                    chosen = slice(int(chosen[0]), int(chosen[-1]) + 1)  # a run: no copy

            def pick(values: np.ndarray, chosen: np.ndarray | slice | None = chosen
                     ) -> np.ndarray:
                return values if chosen is None else values[chosen]

            part = (batch if chosen is None
                    else batch.slice(chosen.start, chosen.stop - chosen.start)
                    if isinstance(chosen, slice) else batch.take(pa.array(chosen)))
            times = pick(micros)
            summary = WindowSummary(
                task=task, rows=part.num_rows, first_served_at=int(times.min()),
                last_served_at=int(times.max()),
                inputs={n: profile_of(part.column(n), record.field(n)) for n in own_inputs},
                predictions={n: profile_of(pa.array(pick(v)), SCORE)
                             for n, v in scores.items()})
            key = (number, int(start))
            if key in groups:
                held = groups[key]
                held.summary = merge_summaries(held.summary, summary)
            else:
                held = groups[key] = WindowRows(summary)
            held.hashes.append(pick(hashes))
            for name, values in scores.items():
                held.predictions.setdefault(name, []).append(pick(values))


class _Repeats:
    """Each version's row ids, added part by part in file order; `first` gives, per version,
    the index (among that version's ids) of the earliest id seen twice. The search runs once,
    over all of them, when the last part is in (row_ids.first_repeat)."""

    def __init__(self) -> None:
        self._parts: dict[int, list[np.ndarray]] = {}

    def add(self, number: int, hashes: np.ndarray) -> None:
        self._parts.setdefault(number, []).append(hashes)

    def first(self) -> dict[int, int]:
        found = {}
        for number, parts in self._parts.items():
            index = first_repeat(parts[0] if len(parts) == 1 else np.concatenate(parts))
            if index >= 0:
                found[number] = index
        self._parts.clear()
        return found


def _finished(encoder: compact.StreamEncoder, written: list[Future]) -> bytes:
    for part in written:  # done before this task (one thread): a failed write fails the stream
        part.result()
    return encoder.finish()


def _encoding() -> ThreadPoolExecutor:
    """One thread, so that the parts of each window are written in file order."""
    return shared_pool("served-encode")


def _refuse_duplicates(seen: dict[int, list[tuple[np.ndarray, int, np.ndarray | None]]],
                       repeats: _Repeats, context: ServingContext) -> None:
    """A row id may be scored once per version in a batch (two versions may score it)."""
    found = repeats.first()
    for number, parts in seen.items():
        second = found.get(number, -1)  # the earliest row repeating an id
        if second >= 0:
            raise UserError(f"the row id of this row already appears in the batch for "
                            f"v{number}; a version scores a row once",
                            place=cell(_row_number(parts, second), "row_id"))


def _row_number(parts: list[tuple[np.ndarray, int, np.ndarray | None]], index: int) -> int:
    """The file row (from 1) of the index-th id of one version."""
    for hashes, first_row, positions in parts:
        if index < len(hashes):
            return first_row + (index if positions is None else int(positions[index])) + 1
        index -= len(hashes)
    return index + 1
