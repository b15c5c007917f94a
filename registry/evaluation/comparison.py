"""Paired comparison of a candidate and a baseline on the rows they share (joined on row_id).

Every difference is candidate - baseline, with an interval and a two-sided p-value: DeLong's
test for roc_auc, McNemar's exact test for accuracy (with a paired bootstrap interval), and the
paired bootstrap for every other metric.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from registry.evaluation.bootstrap import BOOTSTRAP_METRICS, correctness, paired_bootstrap
from registry.evaluation.delong import delong_difference
from registry.evaluation.mcnemar import mcnemar_exact_p_value
from registry.evaluation.metrics import MetricReport, compute_metrics
from registry.evaluation.predictions import Predictions, PredictionsError, UndefinedMetric
from registry.metric_names import METRIC_NAMES

METHOD_DELONG = "delong"
METHOD_MCNEMAR = "mcnemar-exact"  # interval from the paired bootstrap
METHOD_BOOTSTRAP = "paired-bootstrap"


@dataclass(frozen=True)
class Difference:
    """candidate - baseline for one metric."""

    difference: float
    ci_low: float
    ci_high: float
    p_value: float
    method: str

    def to_dict(self) -> dict[str, Any]:
        return {"difference": self.difference, "ci_low": self.ci_low, "ci_high": self.ci_high,
                "p_value": self.p_value, "method": self.method}


@dataclass(frozen=True)
class Matching:
    """How the two files' rows met: matched on row_id, or present in one file only."""

    matched: int
    candidate_only: int
    baseline_only: int


@dataclass(frozen=True)
class ComparisonReport:
    task: str
    matching: Matching
    candidate: MetricReport
    baseline: MetricReport
    differences: dict[str, Difference | None]
    confidence: float
    seed: int
    resamples: int

    def to_dict(self) -> dict[str, Any]:
        """The `comparison` object of the metrics JSON: metric name -> difference."""
        return {name: d.to_dict() for name, d in self.differences.items() if d is not None}


@dataclass(frozen=True)
class PairedRows:
    """Candidate and baseline restricted to shared row ids, in the same (row_id) order."""

    candidate: Predictions
    baseline: Predictions
    matching: Matching


def pair_rows(candidate: Predictions, baseline: Predictions) -> PairedRows:
    """Join on row_id; labels of shared rows must agree, and so must task and classes."""
    if candidate.task != baseline.task:
        raise PredictionsError(
            f"the baseline is for a {baseline.task} task, the candidate for {candidate.task}",
            place="--baseline")
    if set(candidate.classes) != set(baseline.classes):
        raise PredictionsError(
            f"the baseline's classes ({', '.join(baseline.classes)}) differ from the "
            f"candidate's ({', '.join(candidate.classes)})", place="--baseline")
    _, in_candidate, in_baseline = np.intersect1d(
        candidate.row_ids, baseline.row_ids, assume_unique=True, return_indices=True)
    matching = Matching(matched=int(in_candidate.shape[0]),
                        candidate_only=len(candidate) - int(in_candidate.shape[0]),
                        baseline_only=len(baseline) - int(in_baseline.shape[0]))
    if matching.matched == 0:
        raise PredictionsError("no row_id of the baseline occurs in the candidate",
                               place="--baseline")
    paired_candidate = candidate.take(in_candidate)
    paired_baseline = baseline.take(in_baseline)
    if baseline.task == "multiclass" and baseline.classes != candidate.classes:
        reorder = [baseline.classes.index(name) for name in candidate.classes]
        remap = np.argsort(reorder)
        paired_baseline = Predictions(
            task=baseline.task, row_ids=paired_baseline.row_ids,
            labels=remap[paired_baseline.labels], scores=paired_baseline.scores[:, reorder],
            classes=candidate.classes, extra_columns=paired_baseline.extra_columns)
    disagree = np.flatnonzero(paired_candidate.labels != paired_baseline.labels)
    if disagree.size:
        row_id = str(paired_candidate.row_ids[disagree[0]])
        raise PredictionsError(
            f"row id {row_id!r} has a different label in the baseline; both files must "
            f"be predictions on the same labelled rows", place="column label")
    return PairedRows(paired_candidate, paired_baseline, matching)


def compare(candidate: Predictions, baseline: Predictions, *, confidence: float = 0.95,
            seed: int | tuple[int, ...] = 0, resamples: int = 1000,
            threshold: float = 0.5) -> ComparisonReport:
    """Every metric of the task, candidate - baseline, on the rows both files share."""
    check_confidence(confidence)
    pair = pair_rows(candidate, baseline)
    return compare_paired(pair, confidence=confidence, seed=seed, resamples=resamples,
                          threshold=threshold)


def compare_paired(pair: PairedRows, *, confidence: float, seed: int | tuple[int, ...],
                   resamples: int, threshold: float) -> ComparisonReport:
    candidate, baseline = pair.candidate, pair.baseline
    task = candidate.task
    differences: dict[str, Difference | None] = {}
    bootstrapped = paired_bootstrap(candidate, baseline, BOOTSTRAP_METRICS[task],
                                    threshold=threshold, confidence=confidence, seed=seed,
                                    resamples=resamples)
    for name in METRIC_NAMES[task]:
        if name == "roc_auc":
            differences[name] = _delong(candidate, baseline, confidence)
        elif name == "accuracy":
            result = bootstrapped[name]
            right_c = correctness(candidate, threshold)
            right_b = correctness(baseline, threshold)
            p_value = mcnemar_exact_p_value(int(np.count_nonzero(right_c & ~right_b)),
                                            int(np.count_nonzero(~right_c & right_b)))
            differences[name] = Difference(result.difference, result.ci_low, result.ci_high,
                                           p_value, METHOD_MCNEMAR)
        else:
            result = bootstrapped[name]
            if not np.isfinite(result.difference):
                differences[name] = None
                continue
            differences[name] = Difference(result.difference, result.ci_low, result.ci_high,
                                           result.p_value, METHOD_BOOTSTRAP)
    return ComparisonReport(
        task=task, matching=pair.matching,
        candidate=compute_metrics(candidate, threshold=threshold, with_calibration=False),
        baseline=compute_metrics(baseline, threshold=threshold, with_calibration=False),
        differences=differences, confidence=confidence,
        seed=seed if isinstance(seed, int) else int(seed[0]), resamples=resamples)


def _delong(candidate: Predictions, baseline: Predictions, confidence: float
            ) -> Difference | None:
    try:
        result = delong_difference(candidate.labels, candidate.scores, baseline.scores,
                                   confidence=confidence)
    except UndefinedMetric:
        return None
    return Difference(result.difference, result.ci_low, result.ci_high, result.p_value,
                      METHOD_DELONG)


def check_confidence(confidence: float) -> None:
    if not 0.0 < confidence < 1.0:
        raise PredictionsError(f"confidence {confidence} is not between 0 and 1",
                               place="--confidence")
