"""Metrics and paired comparisons per value of a slice column, Holm-adjusted across slices.

Holm (1979), A simple sequentially rejective multiple test procedure, Scandinavian Journal of
Statistics 6(2):65-70: it controls the family-wise error rate over the slices of one metric.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from registry.evaluation.comparison import (
    Difference,
    Matching,
    PairedRows,
    check_confidence,
    compare_paired,
    pair_rows,
)
from registry.evaluation.metrics import compute_metrics
from registry.evaluation.predictions import Predictions, PredictionsError
from registry.multiple_testing import holm_adjust


@dataclass(frozen=True)
class SliceDifference:
    difference: float
    ci_low: float
    ci_high: float
    p_value: float
    p_value_holm: float
    method: str

    def to_dict(self) -> dict[str, Any]:
        return dict(self.__dict__)


@dataclass(frozen=True)
class SliceResult:
    """One value of the slice column: its rows, metrics, and (with a baseline) differences."""

    n: int
    metrics: dict[str, float | None]
    baseline_metrics: dict[str, float | None] | None
    differences: dict[str, SliceDifference | None]

    def to_dict(self) -> dict[str, Any]:
        document: dict[str, Any] = {"n": self.n, "metrics": self.metrics}
        if self.baseline_metrics is not None:
            document["baseline_metrics"] = self.baseline_metrics
            document["comparison"] = {name: d.to_dict()
                                      for name, d in self.differences.items() if d is not None}
        return document


@dataclass(frozen=True)
class SliceReport:
    column: str
    values: dict[str, SliceResult]
    matching: Matching | None = None

    def to_dict(self) -> dict[str, Any]:
        return {"column": self.column, "correction": "holm-bonferroni",
                "values": {value: result.to_dict() for value, result in self.values.items()}}


def slice_metrics(predictions: Predictions, slice_column: str, *,
                  threshold: float = 0.5) -> SliceReport:
    """Metrics of one set of predictions for every value of the slice column."""
    column = _slice_values(predictions, None, slice_column)
    values = {}
    for value in np.unique(column).tolist():
        rows = predictions.take(column == value)
        values[value] = SliceResult(
            n=len(rows), baseline_metrics=None, differences={},
            metrics=compute_metrics(rows, threshold=threshold, with_calibration=False).metrics)
    return SliceReport(slice_column, values)


def compare_slices(candidate: Predictions, baseline: Predictions, slice_column: str, *,
                   confidence: float = 0.95, seed: int = 0, resamples: int = 1000,
                   threshold: float = 0.5) -> SliceReport:
    """The paired comparison within each slice, with Holm-adjusted p-values per metric."""
    check_confidence(confidence)
    pair = pair_rows(candidate, baseline)
    column = _slice_values(pair.candidate, pair.baseline, slice_column)
    slice_values = np.unique(column).tolist()
    reports = {}
    for index, value in enumerate(slice_values):
        rows = column == value
        sub_pair = PairedRows(pair.candidate.take(rows), pair.baseline.take(rows), pair.matching)
        # Each slice draws its own resamples, reproducibly from the one seed.
        reports[value] = compare_paired(sub_pair, confidence=confidence,
                                        seed=(seed, index + 1), resamples=resamples,
                                        threshold=threshold)

    metric_names = next(iter(reports.values())).differences.keys()
    adjusted: dict[str, dict[str, float | None]] = {}
    for name in metric_names:
        raw = [_p_value(reports[value].differences.get(name)) for value in slice_values]
        adjusted[name] = dict(zip(slice_values, holm_adjust(raw), strict=True))

    values = {}
    for value in slice_values:
        report = reports[value]
        differences: dict[str, SliceDifference | None] = {}
        for name, d in report.differences.items():
            holm = adjusted[name][value]
            differences[name] = None if d is None or holm is None else SliceDifference(
                d.difference, d.ci_low, d.ci_high, d.p_value, holm, d.method)
        values[value] = SliceResult(n=report.candidate.n, metrics=report.candidate.metrics,
                                    baseline_metrics=report.baseline.metrics,
                                    differences=differences)
    return SliceReport(slice_column, values, pair.matching)


def _p_value(difference: Difference | None) -> float | None:
    return None if difference is None else difference.p_value


def _slice_values(candidate: Predictions, baseline: Predictions | None,
                  slice_column: str) -> np.ndarray:
    """The slice column of the candidate, or else of the baseline."""
    if slice_column in candidate.extra_columns:
        return candidate.extra_columns[slice_column]
    if baseline is not None and slice_column in baseline.extra_columns:
        return baseline.extra_columns[slice_column]
    known = sorted(candidate.extra_columns)
    hint = f"; columns that can slice: {', '.join(known)}" if known else \
        "; the predictions have no extra columns to slice by"
    raise PredictionsError(f"no such column in the predictions{hint}",
                           place=f"--slice {slice_column}")
