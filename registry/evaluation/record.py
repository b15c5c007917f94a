"""The evaluation record: what the catalogue stores of one evaluation besides its per-row
predictions, in one shape whatever the task (docs/stored-shapes.md).

Every key is always present: `threshold` is null and `calibration` empty where the task has
none (regression, multiclass); `slices` holds one slice report per name in `slice_columns`.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from typing import Any

from registry.errors import UserError
from registry.evaluation.metrics import compute_metrics
from registry.evaluation.predictions import Predictions
from registry.evaluation.slices import slice_metrics

KEYS = ("task", "n", "metrics", "threshold", "calibration", "slice_columns", "slices")


class UnreadableEvaluationRecord(UserError):
    kind = "unreadable-evaluation-record"


@dataclass(frozen=True)
class EvaluationRecord:
    task: str
    n: int
    metrics: dict[str, float | None]
    threshold: float | None
    calibration: list[dict[str, Any]]
    slice_columns: list[str]
    slices: dict[str, Any]

    def to_plain(self) -> dict[str, Any]:
        return {key: getattr(self, key) for key in KEYS}

    def to_json(self) -> str:
        """The stored text; keys in the order of KEYS, so a record reads and writes unchanged."""
        return json.dumps(self.to_plain(), allow_nan=False)


def evaluation_record(predictions: Predictions, slice_columns: tuple[str, ...],
                      threshold: float) -> EvaluationRecord:
    """Metrics of the predictions (with the calibration table of a binary task) and of each
    slice column; slice columns must be extra columns of the predictions (checked by callers)."""
    report = compute_metrics(predictions, threshold=threshold)
    return EvaluationRecord(
        task=report.task, n=report.n, metrics=dict(report.metrics), threshold=report.threshold,
        calibration=[dict(bin_.__dict__) for bin_ in report.calibration],
        slice_columns=list(slice_columns),
        slices={column: slice_metrics(predictions, column, threshold=threshold).to_dict()
                for column in slice_columns})


def read_evaluation_record(text: str, *, place: str = "stored evaluation") -> EvaluationRecord:
    """Read a stored record; anything but the one shape is an error naming what is wrong."""
    try:
        document = json.loads(text)
    except (json.JSONDecodeError, TypeError):
        raise UnreadableEvaluationRecord("not JSON", place=place) from None
    if not isinstance(document, dict):
        raise UnreadableEvaluationRecord("not a JSON object", place=place)
    missing = [key for key in KEYS if key not in document]
    unknown = sorted(set(document) - set(KEYS))
    if missing or unknown:
        raise UnreadableEvaluationRecord(
            "not an evaluation record: " + "; ".join(
                part for part in (f"missing {', '.join(missing)}" if missing else "",
                                  f"unknown {', '.join(unknown)}" if unknown else "") if part),
            place=place)
    kinds = {"task": str, "n": int, "metrics": dict, "calibration": list,
             "slice_columns": list, "slices": dict}
    for key, kind in kinds.items():
        if not isinstance(document[key], kind):
            raise UnreadableEvaluationRecord(f"{key} is not a {kind.__name__}", place=place)
    threshold = document["threshold"]
    if threshold is not None and not isinstance(threshold, int | float):
        raise UnreadableEvaluationRecord("threshold is not a number or null", place=place)
    return EvaluationRecord(**{key: document[key] for key in KEYS})
