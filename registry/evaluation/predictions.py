"""Predictions files (CSV or Parquet): reading, validating, and the columns we store per row.

A predictions file has `row_id`, `label` and, by task, `score` (binary: probability of the
positive class 1), `prediction` (regression) or one `p_<class>` column per class (multiclass).
Every other column is kept as text and may serve as a slice. Rows are counted from 1, the first
row after the header.
"""

from __future__ import annotations

import csv
import io
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from registry.errors import UserError

TASKS = ("binary", "regression", "multiclass")
CLASS_PREFIX = "p_"
# Multiclass probabilities of one row must add up to 1 within this (CSV files round values).
PROBABILITY_SUM_TOLERANCE = 1e-3


class PredictionsError(UserError):
    """A predictions file or its columns cannot be used for the task asked for."""


@dataclass(frozen=True, eq=False)
class Predictions:
    """The validated rows of one predictions file, as numpy arrays in file order.

    `labels` holds 0/1 (binary), floats (regression) or class indices into `classes`
    (multiclass); `scores` holds the positive-class probability (binary), the prediction
    (regression) or an (n, classes) matrix of probabilities (multiclass).
    """

    task: str
    row_ids: np.ndarray
    labels: np.ndarray
    scores: np.ndarray
    classes: tuple[str, ...] = ()
    extra_columns: Mapping[str, np.ndarray] = field(default_factory=dict)

    def __len__(self) -> int:
        return int(self.row_ids.shape[0])

    def take(self, rows: np.ndarray) -> Predictions:
        """The predictions of the given row positions (an index array or a boolean mask)."""
        return Predictions(
            task=self.task,
            row_ids=self.row_ids[rows],
            labels=self.labels[rows],
            scores=self.scores[rows],
            classes=self.classes,
            extra_columns={name: values[rows] for name, values in self.extra_columns.items()},
        )

    def score_columns(self) -> dict[str, np.ndarray]:
        """The prediction columns under their file names."""
        if self.task == "binary":
            return {"score": self.scores}
        if self.task == "regression":
            return {"prediction": self.scores}
        return {CLASS_PREFIX + name: self.scores[:, k] for k, name in enumerate(self.classes)}

    def to_columns(self) -> dict[str, Any]:
        """The rows as JSON-ready columns under their file names, plus the task."""
        if self.task == "multiclass":
            labels: list[Any] = [self.classes[k] for k in self.labels.tolist()]
        else:
            labels = self.labels.tolist()
        columns: dict[str, Any] = {"task": self.task, "row_id": self.row_ids.tolist(),
                                   "label": labels}
        columns.update({name: values.tolist() for name, values in self.score_columns().items()})
        columns.update({name: values.tolist() for name, values in self.extra_columns.items()})
        return columns

    @classmethod
    def from_columns(cls, columns: Mapping[str, Any], task: str | None = None) -> Predictions:
        """Rebuild (and validate) predictions from `to_columns()` or any mapping of columns."""
        columns = dict(columns)
        stored_task = columns.pop("task", None)
        return build_predictions(columns, task or stored_task or "", source="columns")

    def to_bytes(self) -> bytes:
        """The form the catalogue stores: an Arrow IPC file (registry/evaluation/arrow_form.py).

        float64 columns hold every score exactly, so none changes on the way through.
        """
        from registry.evaluation.arrow_form import to_arrow_file

        return to_arrow_file(self)

    @classmethod
    def from_bytes(cls, data: bytes) -> Predictions:
        from registry.evaluation.arrow_form import from_arrow_file

        return from_arrow_file(data)


def read_predictions(path: str | Path, task: str) -> Predictions:
    """Read and validate a CSV or Parquet predictions file for a task."""
    path = Path(path)
    check_task(task)
    try:
        data = path.read_bytes()
    except OSError as error:
        raise PredictionsError(f"cannot read the file: {error.strerror or error}",
                               place=str(path)) from None
    if not data.strip():
        raise PredictionsError("the file is empty", place=str(path))
    if data[:4] == b"PAR1" or path.suffix.lower() in (".parquet", ".pq"):
        columns = _parquet_columns(data, path)
    else:
        columns = _csv_columns(data, path)
    return build_predictions(columns, task, source=str(path))


def infer_task(path: str | Path, *, place: str = "PREDICTIONS") -> str:
    """binary when there is a `score` column, regression with `prediction`, multiclass with
    `p_<class>` columns."""
    file = Path(path)
    try:
        if file.suffix.lower() in (".parquet", ".pq") or file.read_bytes()[:4] == b"PAR1":
            import pyarrow.parquet as pq

            columns = pq.read_schema(file).names
        else:
            with file.open(newline="", encoding="utf-8") as handle:
                columns = next(csv.reader(handle), [])
    except FileNotFoundError:
        raise UserError(f"no such file: {path}", place=place) from None
    except Exception as error:  # unreadable header: let the reader say exactly what is wrong
        raise UserError(f"cannot read the columns of {path}: {error}", place=place) from None
    if "score" in columns:
        return "binary"
    if "prediction" in columns:
        return "regression"
    if any(column.startswith("p_") for column in columns):
        return "multiclass"
    raise UserError("cannot tell the task: expected a `score`, `prediction` or `p_<class>` "
                    "column; or give --task", place=place)


def check_task(task: str) -> None:
    if task not in TASKS:
        raise PredictionsError(f"unknown task {task!r}; use one of {', '.join(TASKS)}",
                               place="--task")


def build_predictions(columns: Mapping[str, Sequence[Any] | np.ndarray], task: str, *,
                      source: str) -> Predictions:
    """Validate columns of raw values (text or numbers) and turn them into Predictions."""
    check_task(task)
    lengths = {len(values) for values in columns.values()}
    if len(lengths) > 1:
        raise PredictionsError("columns differ in length", place=source)
    row_count = lengths.pop() if lengths else 0
    if row_count == 0:
        raise PredictionsError("no rows: the file has a header but no predictions",
                               place=source)

    score_names = _score_column_names(columns, task)
    for name in ("row_id", "label", *score_names):
        if name not in columns:
            needed = "row_id, label and " + _score_description(task)
            raise PredictionsError(f"missing; a {task} predictions file needs {needed}",
                                   place=f"column {name}")

    row_ids = _text_column(columns["row_id"], "row_id")
    empty = np.flatnonzero(row_ids == "")
    if empty.size:
        raise PredictionsError("empty row id", place=_place(empty[0], "row_id"))
    _check_unique(row_ids)

    if task == "multiclass":
        classes = tuple(name[len(CLASS_PREFIX):] for name in score_names)
        probabilities = np.column_stack(
            [_probability_column(columns[name], name) for name in score_names])
        _check_rows_sum_to_one(probabilities)
        labels = _class_labels(columns["label"], classes)
        scores = probabilities
    elif task == "binary":
        classes = ("0", "1")
        scores = _probability_column(columns["score"], "score")
        labels = _binary_labels(columns["label"])
        if labels.min() == labels.max():
            raise PredictionsError(
                f"every label is {int(labels[0])}; a binary evaluation needs rows of both "
                f"classes 0 and 1", place="column label")
    else:
        classes = ()
        scores = _number_column(columns["prediction"], "prediction")
        labels = _number_column(columns["label"], "label")

    reserved = {"row_id", "label", *score_names}
    extra = {name: _text_column(values, name)
             for name, values in columns.items() if name not in reserved}
    return Predictions(task=task, row_ids=row_ids, labels=labels, scores=scores,
                       classes=classes, extra_columns=extra)


def _score_description(task: str) -> str:
    return {"binary": "score", "regression": "prediction",
            "multiclass": "one p_<class> column per class (at least two)"}[task]


def _score_column_names(columns: Mapping[str, Any], task: str) -> list[str]:
    if task == "binary":
        return ["score"]
    if task == "regression":
        return ["prediction"]
    names = [name for name in columns if name.startswith(CLASS_PREFIX) and len(name) > 2]
    if len(names) < 2:
        raise PredictionsError(
            f"a multiclass predictions file needs one p_<class> column per class, "
            f"at least two; found {len(names)}", place="column p_<class>")
    return names


def _place(row_index: int, column: str) -> str:
    return f"row {int(row_index) + 1}, column {column}"


def _text_column(values: Sequence[Any] | np.ndarray, column: str) -> np.ndarray:
    """Values as text; missing values (None, NaN from Parquet) become the empty string."""
    if isinstance(values, np.ndarray) and values.dtype.kind == "U":
        return values
    texts = []
    for value in values:
        if value is None or (isinstance(value, float) and math.isnan(value)):
            texts.append("")
        elif isinstance(value, float) and value.is_integer():
            texts.append(str(int(value)))
        else:
            texts.append(str(value))
    return np.asarray(texts, dtype=str)


def _number_column(values: Sequence[Any] | np.ndarray, column: str) -> np.ndarray:
    """Finite floats, or an error naming the first row that is not one."""
    try:
        numbers = np.asarray(values, dtype=np.float64)
    except (TypeError, ValueError):
        numbers = None
    if numbers is None or numbers.ndim != 1:
        for index, value in enumerate(values):
            if not _is_number(value):
                raise PredictionsError(f"{_quote(value)} is not a number",
                                       place=_place(index, column))
        numbers = np.asarray([float(v) for v in values], dtype=np.float64)
    bad = np.flatnonzero(~np.isfinite(numbers))
    if bad.size:
        raise PredictionsError(f"{_quote(values[bad[0]])} is not a finite number",
                               place=_place(bad[0], column))
    return numbers


def _is_number(value: Any) -> bool:
    if isinstance(value, bool):
        return True
    try:
        float(value)
    except (TypeError, ValueError):
        return False
    return True


def _quote(value: Any) -> str:
    if value is None or value == "":
        return "an empty value"
    return repr(str(value)) if isinstance(value, str) else str(value)


def _probability_column(values: Sequence[Any] | np.ndarray, column: str) -> np.ndarray:
    probabilities = _number_column(values, column)
    outside = np.flatnonzero((probabilities < 0.0) | (probabilities > 1.0))
    if outside.size:
        raise PredictionsError(
            f"probability {float(probabilities[outside[0]]):g} is outside [0, 1]",
            place=_place(outside[0], column))
    return probabilities


def _check_rows_sum_to_one(probabilities: np.ndarray) -> None:
    sums = probabilities.sum(axis=1)
    off = np.flatnonzero(np.abs(sums - 1.0) > PROBABILITY_SUM_TOLERANCE)
    if off.size:
        raise PredictionsError(
            f"class probabilities add up to {sums[off[0]]:.6g}, not 1",
            place=f"row {off[0] + 1}, columns p_<class>")


def _binary_labels(values: Sequence[Any] | np.ndarray) -> np.ndarray:
    try:
        numbers = np.asarray(values, dtype=np.float64)
    except (TypeError, ValueError):
        numbers = None
    if numbers is None or numbers.ndim != 1:
        numbers = np.asarray([float(v) if _is_number(v) else np.nan for v in values])
    bad = np.flatnonzero((numbers != 0.0) & (numbers != 1.0))
    if bad.size:
        raise PredictionsError(
            f"label {_quote(values[bad[0]])} does not fit a binary task (labels are 0 or 1)",
            place=_place(bad[0], "label"))
    return numbers.astype(np.int8)


def _class_labels(values: Sequence[Any] | np.ndarray, classes: tuple[str, ...]) -> np.ndarray:
    texts = _text_column(values, "label")
    known = np.asarray(classes, dtype=str)
    order = np.argsort(known)
    positions = np.searchsorted(known[order], texts)
    positions = np.minimum(positions, len(classes) - 1)
    indices = order[positions]
    bad = np.flatnonzero(known[indices] != texts)
    if bad.size:
        raise PredictionsError(
            f"label {_quote(str(texts[bad[0]]))} does not fit this multiclass task: it has no "
            f"p_<class> column (classes: {', '.join(classes)})",
            place=_place(bad[0], "label"))
    return indices.astype(np.int64)


def _check_unique(row_ids: np.ndarray) -> None:
    order = np.argsort(row_ids, kind="stable")
    ordered = row_ids[order]
    repeats = np.flatnonzero(ordered[1:] == ordered[:-1]) + 1
    if repeats.size == 0:
        return
    # Report the earliest row in the file that repeats an id seen before it.
    later_rows = order[repeats]
    worst = int(np.argmin(later_rows))
    repeated_row = int(later_rows[worst])
    first_row = int(order[np.searchsorted(ordered, ordered[repeats[worst]])])
    raise PredictionsError(
        f"row id {str(row_ids[repeated_row])!r} repeats row {first_row + 1}",
        place=_place(repeated_row, "row_id"))


def _csv_columns(data: bytes, path: Path) -> dict[str, list[str]]:
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError as error:
        raise PredictionsError(f"not UTF-8 text (byte {error.start})", place=str(path)) from None
    reader = csv.reader(io.StringIO(text, newline=""))
    try:
        header = next(reader)
    except (StopIteration, csv.Error):
        raise PredictionsError("the file is empty", place=str(path)) from None
    header = [name.strip() for name in header]
    seen: set[str] = set()
    for name in header:
        if name in seen:
            raise PredictionsError("appears twice in the header", place=f"column {name}")
        seen.add(name)
    rows: list[list[str]] = []
    try:
        for line in reader:
            if not line:
                continue
            if len(line) != len(header):
                raise PredictionsError(
                    f"has {len(line)} fields but the header has {len(header)}",
                    place=f"row {len(rows) + 1}")
            rows.append(line)
    except csv.Error as error:
        raise PredictionsError(f"malformed CSV: {error}", place=f"row {len(rows) + 1}") from None
    if not rows:
        return {name: [] for name in header}
    columns = zip(*rows, strict=True)  # every row has the header's length, checked above
    return {name: [value.strip() for value in values]
            for name, values in zip(header, columns, strict=True)}


def _parquet_columns(data: bytes, path: Path) -> dict[str, Any]:
    import pyarrow as pa
    import pyarrow.parquet as pq

    try:
        table = pq.read_table(pa.BufferReader(data))
    except (pa.ArrowException, OSError) as error:
        raise PredictionsError(f"not a readable Parquet file: {error}", place=str(path)) from None
    columns: dict[str, Any] = {}
    for name, column in zip(table.column_names, table.columns, strict=True):
        if pa.types.is_floating(column.type) or pa.types.is_integer(column.type) \
                or pa.types.is_boolean(column.type):
            values = column.to_numpy(zero_copy_only=False)
            if values.dtype.kind in "biu" and name != "row_id" and name != "label":
                values = values.astype(np.float64)
            columns[name] = values if name not in ("row_id",) else values.tolist()
        else:
            columns[name] = column.to_pylist()
    return columns


class UndefinedMetric(PredictionsError):
    """The rows cannot define a metric or a test (one class only, too few rows)."""


def check_row_ids(predictions: Predictions, expected_row_ids: Sequence[str] | np.ndarray,
                  *, dataset: str = "the dataset") -> None:
    """Refuse predictions whose row ids are not exactly the expected key set (a dataset's keys)."""
    expected = np.unique(np.asarray([str(key) for key in expected_row_ids], dtype=str))
    missing = np.setdiff1d(expected, predictions.row_ids, assume_unique=True)
    unexpected = np.setdiff1d(predictions.row_ids, expected, assume_unique=True)
    if missing.size == 0 and unexpected.size == 0:
        return
    parts = []
    if missing.size:
        parts.append(f"{missing.size} row ids of {dataset} have no prediction "
                     f"(first: {str(missing[0])!r})")
    if unexpected.size:
        parts.append(f"{unexpected.size} predicted row ids are not in {dataset} "
                     f"(first: {str(unexpected[0])!r})")
    raise PredictionsError("; ".join(parts), place="column row_id")
