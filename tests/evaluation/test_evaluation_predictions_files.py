"""Reading predictions files (CSV, Parquet) and the stored per-row form."""

from __future__ import annotations

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from evaluation_data import binary_pair, multiclass_pair, regression_pair, write_predictions_csv
from registry.evaluation import Predictions, compute_metrics, read_predictions


def _same(a: Predictions, b: Predictions) -> None:
    assert a.task == b.task and a.classes == b.classes
    assert a.row_ids.tolist() == b.row_ids.tolist()
    assert np.array_equal(a.labels, b.labels)
    np.testing.assert_array_equal(a.scores, b.scores)
    assert {k: v.tolist() for k, v in a.extra_columns.items()} == {
        k: v.tolist() for k, v in b.extra_columns.items()}


@pytest.mark.parametrize("pair", [binary_pair(61, 50), regression_pair(62, 50),
                                  multiclass_pair(63, 50)], ids=["binary", "regression",
                                                                 "multiclass"])
def test_csv_and_parquet_files_read_back_the_same_predictions(tmp_path, pair):
    predictions = pair[0]
    csv_path = write_predictions_csv(tmp_path / "p.csv", predictions)
    columns = predictions.to_columns()
    columns.pop("task")
    pq.write_table(pa.table(columns), tmp_path / "p.parquet")
    from_csv = read_predictions(csv_path, predictions.task)
    from_parquet = read_predictions(tmp_path / "p.parquet", predictions.task)
    _same(from_csv, predictions)
    _same(from_parquet, predictions)


def test_extra_columns_are_kept_as_text_for_slicing(tmp_path):
    path = tmp_path / "p.csv"
    path.write_text("row_id,label,score,district,pipe_age_years\n"
                    "S-1,1,0.9,NORTHGATE,41\nS-2,0,0.2,RIVERSIDE,12.5\n")
    predictions = read_predictions(path, "binary")
    assert predictions.extra_columns["district"].tolist() == ["NORTHGATE", "RIVERSIDE"]
    assert predictions.extra_columns["pipe_age_years"].tolist() == ["41", "12.5"]


def test_parquet_integer_row_ids_and_labels_are_accepted(tmp_path):
    table = pa.table({"row_id": [10, 11, 12], "label": [1, 0, 1], "score": [0.8, 0.1, 0.6]})
    pq.write_table(table, tmp_path / "p.parquet")
    predictions = read_predictions(tmp_path / "p.parquet", "binary")
    assert predictions.row_ids.tolist() == ["10", "11", "12"]
    assert predictions.labels.tolist() == [1, 0, 1]


@pytest.mark.parametrize("pair", [binary_pair(64, 80), regression_pair(65, 80),
                                  multiclass_pair(66, 80)], ids=["binary", "regression",
                                                                 "multiclass"])
def test_stored_columns_and_bytes_round_trip_exactly(pair):
    predictions = pair[0]
    _same(Predictions.from_columns(predictions.to_columns()), predictions)
    _same(Predictions.from_bytes(predictions.to_bytes()), predictions)
    assert compute_metrics(Predictions.from_bytes(predictions.to_bytes())).metrics == \
        compute_metrics(predictions).metrics


def test_row_ids_must_be_exactly_the_dataset_keys():
    from registry.evaluation import PredictionsError, check_row_ids
    predictions, _ = binary_pair(67, 5)
    check_row_ids(predictions, list(reversed(predictions.row_ids.tolist())))
    with pytest.raises(PredictionsError) as refused:
        check_row_ids(predictions, predictions.row_ids.tolist()[:4] + ["S-999999"],
                      dataset="brackwater-evaluation-set")
    line = refused.value.one_line()
    assert line.startswith("column row_id: 1 row ids of brackwater-evaluation-set have no")
    assert "'S-999999'" in line and "'S-000004'" in line
