"""The evaluation record the catalogue stores (docs/stored-shapes.md): one shape for every task."""

from __future__ import annotations

import json

import pytest

from evaluation_data import binary_pair, multiclass_pair, regression_pair
from registry.evaluation.record import (
    KEYS,
    UnreadableEvaluationRecord,
    evaluation_record,
    read_evaluation_record,
)

PAIRS = {"binary": binary_pair(81, 60), "regression": regression_pair(82, 60),
         "multiclass": multiclass_pair(83, 60)}


@pytest.mark.parametrize("task", PAIRS)
def test_every_task_stores_every_key_and_reads_back_unchanged(task):
    record = evaluation_record(PAIRS[task][0], (), 0.5)
    text = record.to_json()
    assert list(json.loads(text)) == list(KEYS)
    assert read_evaluation_record(text) == record
    assert read_evaluation_record(text).to_json() == text


def test_only_a_binary_task_has_a_threshold_and_a_calibration_table():
    binary = evaluation_record(PAIRS["binary"][0], (), 0.4)
    assert binary.threshold == 0.4 and len(binary.calibration) == 10
    for task in ("regression", "multiclass"):
        other = evaluation_record(PAIRS[task][0], (), 0.5)
        assert other.threshold is None and other.calibration == []


@pytest.mark.parametrize(("text", "message"), [
    ("[]", "not a JSON object"),
    ('{"task": "binary"}', "missing n, metrics"),
    ('{"task": "regression", "n": 1, "metrics": {}, "threshold": null, "calibration": [], '
     '"slice_columns": [], "slices": {}, "comparison": {}}', "unknown comparison"),
    ('{"task": "regression", "n": "1", "metrics": {}, "threshold": null, "calibration": [], '
     '"slice_columns": [], "slices": {}}', "n is not a int"),
    ("{", "not JSON"),
])
def test_anything_but_the_one_shape_is_refused(text, message):
    with pytest.raises(UnreadableEvaluationRecord, match=message):
        read_evaluation_record(text)
