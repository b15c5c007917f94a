"""`lockkeeper metrics`: the JSON contract of DESIGN.md, and every bad input as one line, exit 2."""

from __future__ import annotations

import json
from pathlib import Path

import pyarrow as pa
import pyarrow.parquet as pq
import pytest
from click.testing import CliRunner

from evaluation_data import binary_pair, multiclass_pair, write_csv, write_predictions_csv
from registry.cli import main
from tests.cli_errors import assert_one_line_error


def run(*arguments: str):
    return CliRunner().invoke(main, ["metrics", *arguments])


@pytest.fixture
def pair_files(tmp_path: Path) -> tuple[Path, Path]:
    candidate, baseline = binary_pair(71, 600)
    return (write_predictions_csv(tmp_path / "candidate.csv", candidate),
            write_predictions_csv(tmp_path / "baseline.csv", baseline))


def test_json_document_has_the_contract_keys_and_metric_names(pair_files):
    result = run(str(pair_files[0]), "--task", "binary", "--json")
    assert result.exit_code == 0, result.stderr
    document = json.loads(result.stdout)
    assert list(document)[:5] == ["task", "n", "metrics", "comparison", "slices"]
    assert document["task"] == "binary" and document["n"] == 600
    assert list(document["metrics"]) == ["roc_auc", "average_precision", "log_loss", "brier",
                                         "accuracy"]
    assert all(isinstance(v, float) for v in document["metrics"].values())
    assert document["comparison"] == {} and document["slices"] == {}
    assert document["higher_is_better"]["log_loss"] is False
    assert document["higher_is_better"]["roc_auc"] is True
    assert len(document["calibration"]) == 10


def test_baseline_and_slice_give_differences_and_holm_adjusted_slices(pair_files):
    result = run(str(pair_files[0]), "--task", "binary", "--baseline", str(pair_files[1]),
                 "--slice", "district", "--seed", "3", "--resamples", "200", "--json")
    assert result.exit_code == 0, result.stderr
    document = json.loads(result.stdout)
    for name, entry in document["comparison"].items():
        assert set(entry) == {"difference", "ci_low", "ci_high", "p_value", "method"}
        assert entry["difference"] == pytest.approx(
            document["matching"]["candidate_metrics"][name]
            - document["matching"]["baseline_metrics"][name])
    assert document["comparison"]["roc_auc"]["method"] == "delong"
    assert document["matching"]["matched"] == 600
    slices = document["slices"]
    assert slices["column"] == "district"
    northgate = slices["values"]["NORTHGATE"]["comparison"]["roc_auc"]
    assert northgate["p_value_holm"] >= northgate["p_value"]


def test_text_report_says_which_direction_is_better(pair_files):
    result = run(str(pair_files[0]), "--task", "binary", "--baseline", str(pair_files[1]),
                 "--resamples", "100")
    assert result.exit_code == 0, result.stderr
    assert "lower is better" in result.stdout and "candidate - baseline" in result.stdout


def test_multiclass_from_parquet(tmp_path):
    candidate, _ = multiclass_pair(72, 200)
    columns = candidate.to_columns()
    columns.pop("task")
    pq.write_table(pa.table(columns), tmp_path / "p.parquet")
    result = run(str(tmp_path / "p.parquet"), "--task", "multiclass", "--json")
    assert result.exit_code == 0, result.stderr
    assert list(json.loads(result.stdout)["metrics"]) == ["accuracy", "macro_f1", "log_loss"]


BINARY_HEADER = ["row_id", "label", "score"]


@pytest.mark.parametrize("header, rows, task, fragments", [
    (["row_id", "label"], [["S-1", 1]], "binary", ["column score", "missing"]),
    (["label", "score"], [[1, 0.5]], "binary", ["column row_id", "missing"]),
    (["row_id", "score"], [["S-1", 0.5]], "binary", ["column label"]),
    (["row_id", "label", "score"], [["S-1", 1, 0.5]], "regression", ["column prediction"]),
    (["row_id", "label", "p_A"], [["S-1", "A", 1.0]], "multiclass", ["p_<class>"]),
    (BINARY_HEADER, [["S-1", 1, 0.5], ["S-2", 0, "high"]], "binary",
     ["row 2, column score", "'high' is not a number"]),
    (BINARY_HEADER, [["S-1", 1, 0.5], ["S-2", 0, ""]], "binary", ["row 2, column score"]),
    (BINARY_HEADER, [["S-1", 1, 0.5], ["S-2", 0, "nan"]], "binary",
     ["row 2, column score", "finite"]),
    (["row_id", "label", "prediction"], [["D-1", 3.5, "x"]], "regression",
     ["row 1, column prediction"]),
    (BINARY_HEADER, [["S-1", 1, 0.5], ["S-2", 2, 0.3]], "binary",
     ["row 2, column label", "binary"]),
    (BINARY_HEADER, [["S-1", "yes", 0.5]], "binary", ["row 1, column label"]),
    (BINARY_HEADER, [["S-1", 1, 0.5], ["S-2", 1, 0.3]], "binary",
     ["column label", "both classes"]),
    (["row_id", "label", "prediction"], [["D-1", "lots", 3.0]], "regression",
     ["row 1, column label"]),
    (["row_id", "label", "p_LOW", "p_HIGH"], [["S-1", "MEDIUM", 0.5, 0.5]], "multiclass",
     ["row 1, column label", "MEDIUM"]),
    (BINARY_HEADER, [["S-1", 1, 0.5], ["S-2", 0, 1.2]], "binary",
     ["row 2, column score", "outside [0, 1]"]),
    (BINARY_HEADER, [["S-1", 1, -0.1], ["S-2", 0, 0.2]], "binary",
     ["row 1, column score", "outside [0, 1]"]),
    (["row_id", "label", "p_LOW", "p_HIGH"], [["S-1", "LOW", 0.5, 1.5]], "multiclass",
     ["row 1, column p_HIGH", "outside [0, 1]"]),
    (["row_id", "label", "p_LOW", "p_HIGH"], [["S-1", "LOW", 0.5, 0.2]], "multiclass",
     ["row 1", "add up to 0.7"]),
    (BINARY_HEADER, [["S-1", 1, 0.5], ["S-2", 0, 0.2], ["S-1", 0, 0.3]], "binary",
     ["row 3, column row_id", "row id 'S-1' repeats row 1"]),
    (BINARY_HEADER, [["S-1", 1, 0.5], ["", 0, 0.2]], "binary", ["row 2, column row_id"]),
    (BINARY_HEADER, [], "binary", ["no rows"]),
    (BINARY_HEADER, [["S-1", 1, 0.5], ["S-2", 0]], "binary", ["row 2", "fields"]),
], ids=lambda value: value if isinstance(value, str) else None)
def test_bad_csv_input_is_one_line_and_exit_2(tmp_path, header, rows, task, fragments):
    path = write_csv(tmp_path / "bad.csv", header, rows)
    assert_one_line_error(run(str(path), "--task", task, "--json"), *fragments)


def test_an_empty_file_is_one_line_and_exit_2(tmp_path):
    path = tmp_path / "empty.csv"
    path.write_bytes(b"")
    assert_one_line_error(run(str(path), "--task", "binary"), "empty")


def test_a_missing_file_is_one_line_and_exit_2(tmp_path):
    assert_one_line_error(run(str(tmp_path / "nowhere.csv"), "--task", "binary"), "no such file")


@pytest.mark.parametrize("table, fragments", [
    ({"row_id": ["S-1", "S-2"], "label": [1, 0]}, ["column score", "missing"]),
    ({"row_id": ["S-1", "S-2"], "label": [1, 0], "score": ["0.4", "lots"]},
     ["row 2, column score"]),
    ({"row_id": ["S-1", "S-2"], "label": [1, 0], "score": [0.4, None]},
     ["row 2, column score"]),
    ({"row_id": ["S-1", "S-1"], "label": [1, 0], "score": [0.4, 0.3]},
     ["row 2, column row_id", "repeats row 1"]),
    ({"row_id": ["S-1", "S-2"], "label": [1, 0], "score": [0.4, 7.0]},
     ["row 2, column score", "outside"]),
    ({"row_id": ["S-1", "S-2"], "label": [1, 5], "score": [0.4, 0.3]},
     ["row 2, column label"]),
])
def test_bad_parquet_input_is_one_line_and_exit_2(tmp_path, table, fragments):
    pq.write_table(pa.table(table), tmp_path / "bad.parquet")
    assert_one_line_error(run(str(tmp_path / "bad.parquet"), "--task", "binary"), *fragments)


def test_an_empty_parquet_file_is_one_line_and_exit_2(tmp_path):
    schema = pa.schema([("row_id", pa.string()), ("label", pa.int64()), ("score", pa.float64())])
    pq.write_table(schema.empty_table(), tmp_path / "empty.parquet")
    assert_one_line_error(run(str(tmp_path / "empty.parquet"), "--task", "binary"), "no rows")


def test_a_baseline_sharing_no_rows_is_one_line_and_exit_2(tmp_path, pair_files):
    other = write_csv(tmp_path / "other.csv", BINARY_HEADER, [["Z-1", 1, 0.5], ["Z-2", 0, 0.1]])
    assert_one_line_error(run(str(pair_files[0]), "--task", "binary", "--baseline", str(other)),
                          "--baseline", "no row_id")


def test_a_baseline_with_other_labels_is_one_line_and_exit_2(tmp_path):
    a = write_csv(tmp_path / "a.csv", BINARY_HEADER, [["S-1", 1, 0.5], ["S-2", 0, 0.1]])
    b = write_csv(tmp_path / "b.csv", BINARY_HEADER, [["S-1", 0, 0.5], ["S-2", 1, 0.1]])
    assert_one_line_error(run(str(a), "--task", "binary", "--baseline", str(b)),
                          "different label")


def test_an_unknown_slice_column_is_one_line_and_exit_2(pair_files):
    assert_one_line_error(run(str(pair_files[0]), "--task", "binary", "--slice", "borough"),
                          "--slice borough", "district")


def test_a_confidence_outside_zero_and_one_is_one_line_and_exit_2(pair_files):
    assert_one_line_error(run(str(pair_files[0]), "--task", "binary", "--confidence", "95"),
                          "--confidence")


def test_the_worked_example_of_the_evaluation_document(tmp_path):
    # docs/evaluation.md: six rows with a tie at 0.64, worked by hand from the definitions.
    path = write_csv(tmp_path / "v2.csv", ["row_id", "label", "score", "district"], [
        ["S-000001", 1, 0.82, "NORTHGATE"], ["S-000002", 0, 0.1, "RIVERSIDE"],
        ["S-000003", 0, 0.35, "NORTHGATE"], ["S-000004", 1, 0.64, "RIVERSIDE"],
        ["S-000005", 0, 0.64, "NORTHGATE"], ["S-000006", 1, 0.47, "NORTHGATE"]])
    metrics = json.loads(run(str(path), "--task", "binary", "--json").stdout)["metrics"]
    assert metrics["roc_auc"] == pytest.approx(7.5 / 9)
    assert metrics["average_precision"] == pytest.approx((1 + 2 / 3 + 3 / 4) / 3)
    assert metrics["accuracy"] == pytest.approx(4 / 6)
    assert metrics["brier"] == pytest.approx(
        (0.18**2 + 0.1**2 + 0.35**2 + 0.36**2 + 0.64**2 + 0.53**2) / 6)
