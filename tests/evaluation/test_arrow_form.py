"""Stored predictions as an Arrow IPC file (docs/stored-shapes.md): read back by the catalogue
and, as the independent reference, by pyarrow's own IPC reader (Apache Arrow columnar format,
IPC File Format)."""

from __future__ import annotations

import numpy as np
import pyarrow as pa
import pytest

from evaluation_data import binary_pair, multiclass_pair, regression_pair
from registry.evaluation import Predictions, PredictionsError

PAIRS = {"binary": binary_pair(71, 40), "regression": regression_pair(72, 40),
         "multiclass": multiclass_pair(73, 40)}
LABEL_TYPES = {"binary": pa.int8(), "regression": pa.float64(), "multiclass": pa.utf8()}


def _with_district(predictions: Predictions) -> Predictions:
    districts = np.asarray(["NORTHGATE", "RIVERSIDE"] * (len(predictions) // 2), dtype=str)
    return Predictions(predictions.task, predictions.row_ids, predictions.labels,
                       predictions.scores, predictions.classes, {"district": districts})


@pytest.mark.parametrize("task", PAIRS)
def test_pyarrow_reads_the_stored_bytes_as_the_predictions_file_columns(task):
    predictions = _with_district(PAIRS[task][0])
    data = predictions.to_bytes()
    # The IPC file format opens and ends with the magic "ARROW1" (Arrow columnar format).
    assert data[:6] == b"ARROW1" and data[-6:] == b"ARROW1"
    table = pa.ipc.open_file(pa.BufferReader(data)).read_all()
    score_names = list(predictions.score_columns())
    assert table.column_names == ["row_id", "label", *score_names, "district"]
    assert table.schema.metadata == {b"task": task.encode()}
    assert table.schema.field("row_id").type == pa.utf8()
    assert table.schema.field("label").type == LABEL_TYPES[task]
    assert table.column("row_id").to_pylist() == predictions.row_ids.tolist()
    for name, values in predictions.score_columns().items():
        assert table.schema.field(name).type == pa.float64()
        assert table.column(name).to_pylist() == values.tolist()  # exact, not approximate
    expected_labels = ([predictions.classes[k] for k in predictions.labels.tolist()]
                       if task == "multiclass" else predictions.labels.tolist())
    assert table.column("label").to_pylist() == expected_labels
    assert table.column("district").to_pylist() == predictions.extra_columns["district"].tolist()


@pytest.mark.parametrize("task", PAIRS)
def test_the_stored_bytes_read_back_the_same_predictions(task):
    predictions = _with_district(PAIRS[task][0])
    again = Predictions.from_bytes(predictions.to_bytes())
    assert again.task == predictions.task and again.classes == predictions.classes
    assert again.row_ids.tolist() == predictions.row_ids.tolist()
    np.testing.assert_array_equal(again.labels, predictions.labels)
    np.testing.assert_array_equal(again.scores, predictions.scores)
    assert again.extra_columns["district"].tolist() == \
        predictions.extra_columns["district"].tolist()


def test_the_same_predictions_always_give_the_same_bytes():
    # Blobs are named by SHA-256, and an evaluation sent twice is found by its predictions.
    first, _ = binary_pair(74, 30)
    again = Predictions.from_columns(first.to_columns())
    assert first.to_bytes() == again.to_bytes() == first.to_bytes()


def test_a_table_written_by_pyarrow_alone_is_read_and_checked():
    table = pa.table({"row_id": ["a", "b"], "label": pa.array([1, 0], pa.int8()),
                      "score": [0.9, 1.5]}, metadata={"task": "binary"})
    sink = pa.BufferOutputStream()
    with pa.ipc.new_file(sink, table.schema) as writer:
        writer.write_table(table)
    with pytest.raises(PredictionsError, match="outside"):
        Predictions.from_bytes(sink.getvalue().to_pybytes())


@pytest.mark.parametrize("data", [b"", b"x\x9c not arrow", None])
def test_bytes_that_are_not_a_whole_arrow_file_are_refused(data):
    if data is None:  # a stored file cut short loses its footer
        data = binary_pair(75, 10)[0].to_bytes()[:-12]
    with pytest.raises(PredictionsError, match="not an Arrow IPC file"):
        Predictions.from_bytes(data)
