"""Per-row predictions as the catalogue stores them: an Arrow IPC file (docs/stored-shapes.md).

One column per column of the predictions file, under the same names: `row_id` (utf8), `label`
(int8 for binary, float64 for regression, utf8 class names for multiclass), the prediction
columns (`score`, `prediction` or `p_<class>`, float64) and any extra columns as utf8, in file
order. The task is the schema's metadata key `task`.

The IPC file format (not the stream) so a stored blob opens and ends with the `ARROW1` magic and
a cut one fails to open; uncompressed, because buffer compression is an optional feature some
Arrow implementations lack, and the same predictions must always give the same bytes (the
catalogue names blobs by their SHA-256 and finds an evaluation sent twice by it).
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import numpy as np
import pyarrow as pa

from registry.evaluation.predictions import Predictions, PredictionsError, build_predictions

if TYPE_CHECKING:
    from collections.abc import Mapping

TASK_KEY = b"task"
PLACE = "stored predictions"


def _label_array(predictions: Predictions) -> pa.Array:
    if predictions.task == "binary":
        return pa.array(predictions.labels.astype(np.int8), type=pa.int8())
    if predictions.task == "regression":
        return pa.array(predictions.labels.astype(np.float64), type=pa.float64())
    names = np.asarray(predictions.classes, dtype=str)[predictions.labels]
    return pa.array(names.tolist(), type=pa.utf8())


def predictions_table(predictions: Predictions) -> pa.Table:
    columns: dict[str, pa.Array] = {
        "row_id": pa.array(predictions.row_ids.tolist(), type=pa.utf8()),
        "label": _label_array(predictions),
    }
    for name, values in predictions.score_columns().items():
        columns[name] = pa.array(np.asarray(values, dtype=np.float64), type=pa.float64())
    for name, values in predictions.extra_columns.items():
        columns[name] = pa.array(np.asarray(values, dtype=str).tolist(), type=pa.utf8())
    return pa.table(columns, metadata={TASK_KEY: predictions.task.encode("utf-8")})


def to_arrow_file(predictions: Predictions) -> bytes:
    table = predictions_table(predictions)
    sink = pa.BufferOutputStream()
    with pa.ipc.new_file(sink, table.schema) as writer:
        writer.write_table(table)
    return sink.getvalue().to_pybytes()


def from_arrow_file(data: bytes) -> Predictions:
    """Read (and validate again) predictions stored by to_arrow_file."""
    try:
        table = pa.ipc.open_file(pa.BufferReader(data)).read_all()
    except (pa.ArrowException, OSError) as error:
        raise PredictionsError(f"not an Arrow IPC file: {error}", place=PLACE) from None
    metadata = table.schema.metadata or {}
    if TASK_KEY not in metadata:
        raise PredictionsError("the Arrow schema names no task", place=PLACE)
    columns: Mapping[str, Any] = {
        name: _numpy(column) for name, column in zip(table.column_names, table.columns,
                                                     strict=True)}
    return build_predictions(columns, metadata[TASK_KEY].decode("utf-8"), source=PLACE)


def _numpy(column: pa.ChunkedArray) -> np.ndarray:
    values = column.to_numpy()
    if pa.types.is_string(column.type):
        return np.asarray(values, dtype=str)
    return values
