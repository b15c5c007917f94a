"""Reading an outcome batch: `row_id`, `label`, and optionally `observed_at`.

Outcomes arrive days after their rows were served, in any number of batches; each label is
checked against the task of the rows it joins (binary 0/1, a finite number for regression, one
of the version's classes for multiclass). Outcomes whose row id was never served are counted,
not refused: they may belong to rows served before the retention or elsewhere.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, cast

import fastavro
import numpy as np
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.csv as pacsv
import pyarrow.parquet as pq

from registry.after_release.row_ids import first_repeat, hash_row_ids
from registry.datasets.errors import (
    ColumnsNotMatching,
    DatasetFileError,
    EmptyDataset,
    ValueNotParsing,
    cell,
)
from registry.datasets.readers import guess_format
from registry.errors import UserError

COLUMNS = ("row_id", "label", "observed_at")
BINARY_LABELS = {"0": 0, "1": 1, "false": 0, "true": 1, "0.0": 0, "1.0": 1}


@dataclass(frozen=True)
class OutcomeBatch:
    hashes: np.ndarray  # uint64, file order
    # the labels as text, checked against the task once the rows they join are known: each
    # distinct text once (label_values), and per row the index of its own (label_codes)
    label_values: tuple[str, ...]
    label_codes: np.ndarray
    observed_at: np.ndarray | None  # microseconds since the epoch

    @property
    def labels(self) -> list[str]:
        return [self.label_values[code] for code in self.label_codes.tolist()]


def read_outcomes(path: str, format: str | None = None) -> OutcomeBatch:
    table = _read_table(path, format or guess_format(path))
    for name in table.column_names:
        if name not in COLUMNS:
            raise ColumnsNotMatching(f"an outcome batch has the columns row_id, label and "
                                     f"optionally observed_at, not {name!r}",
                                     place=f"column {name}")
    for name in COLUMNS[:2]:
        if name not in table.column_names:
            raise ColumnsNotMatching(f"the batch has no column {name!r}", place=f"column {name}")
    if table.num_rows == 0:
        raise EmptyDataset("the batch holds no outcomes", place=path)
    for name in COLUMNS[:2]:
        column = table.column(name)
        if column.null_count:
            row = _first(pc.is_null(column).to_numpy(zero_copy_only=False))
            raise ValueNotParsing("a value is missing", place=cell(row + 1, name))
    text = cast(pa.DictionaryArray, pc.dictionary_encode(
        pc.cast(table.column("label"), pa.string()).combine_chunks()))
    values = tuple(str(v).strip() for v in text.dictionary.to_pylist())
    codes = text.indices.to_numpy(zero_copy_only=False).astype(np.int64)
    observed = None
    if "observed_at" in table.column_names:
        observed = _times(table.column("observed_at"))
    hashes = hash_row_ids(table.column("row_id"))
    row = first_repeat(hashes)  # the earliest row repeating an id
    if row >= 0:
        raise UserError("this row id already has an outcome in the batch",
                        place=cell(row + 1, "row_id"))
    return OutcomeBatch(hashes, values, codes, observed)


def _first(mask: np.ndarray) -> int:
    return int(np.argmax(mask))


def _times(column: pa.ChunkedArray) -> np.ndarray:
    array = column.combine_chunks()
    if pa.types.is_timestamp(array.type):
        return array.cast(pa.timestamp("us", tz="UTC")).cast(pa.int64()).to_numpy(
            zero_copy_only=False)
    text = pc.cast(array, pa.string())
    try:
        try:
            parsed = pc.cast(text, pa.timestamp("us", tz="UTC"))
        except pa.ArrowInvalid:
            parsed = pc.cast(text, pa.timestamp("us"))
    except pa.ArrowInvalid:
        for row, value in enumerate(text.to_pylist()):
            try:
                pc.cast(pa.array([value]), pa.timestamp("us", tz="UTC"))
            except pa.ArrowInvalid:
                raise ValueNotParsing(f"{value!r} is not an ISO 8601 time",
                                      place=cell(row + 1, "observed_at")) from None
        raise
    return parsed.cast(pa.int64()).to_numpy(zero_copy_only=False)


def _read_table(path: str, format: str) -> pa.Table:
    try:
        if format == "parquet":
            return pq.read_table(path)
        if format == "avro":
            with open(path, "rb") as handle:
                # an outcome batch's Avro schema is a record, so every datum is a dict
                records = cast("list[dict[str, Any]]", list(fastavro.reader(handle)))
                return pa.Table.from_pylist(records)
        options = pacsv.ConvertOptions(column_types={n: pa.string() for n in COLUMNS},
                                       strings_can_be_null=True, null_values=[""])
        return pacsv.read_csv(path, convert_options=options)
    except FileNotFoundError:
        raise DatasetFileError("no such file", place=path) from None
    except (pa.ArrowException, OSError, ValueError) as error:
        raise DatasetFileError(f"the outcome batch cannot be read as {format} ({error})",
                               place=path) from None


def check_labels(values: tuple[str, ...], codes: np.ndarray, task: str,
                 classes: tuple[str, ...]) -> np.ndarray:
    """The labels as the evaluation package holds them (0/1, floats, class indices), or the
    first one outside the task's classes, named by its row. Each distinct text is read once."""
    if task == "binary":
        read = np.asarray([BINARY_LABELS.get(v.lower(), -1) for v in values], dtype=np.int64)
        need = "a label of a binary task (0 or 1, true or false)"
        return _refuse_unread(read[codes], read[codes] < 0, values, codes, need).astype(np.int8)
    if task == "regression":
        read = np.asarray([_number(v) for v in values], dtype=np.float64)
        rows = read[codes]
        return _refuse_unread(rows, ~np.isfinite(rows), values, codes,
                              "a finite number (regression task)")
    index = {name: k for k, name in enumerate(classes)}
    read = np.asarray([index.get(v, -1) for v in values], dtype=np.int64)
    return _refuse_unread(read[codes], read[codes] < 0, values, codes,
                          f"one of the classes {', '.join(classes)}")


def _number(text: str) -> float:
    try:
        return float(text)
    except ValueError:
        return np.nan


def _refuse_unread(rows: np.ndarray, bad: np.ndarray, values: tuple[str, ...],
                   codes: np.ndarray, need: str) -> np.ndarray:
    if bad.any():
        row = _first(bad)
        raise ValueNotParsing(f"{values[codes[row]]!r} is not {need}", place=cell(row + 1, "label"))
    return rows
