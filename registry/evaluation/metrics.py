"""Metrics of one set of predictions, with the definitions of scikit-learn's documentation.

A metric that a set of rows cannot define (an AUC where only one class occurs) is None.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from registry.evaluation.predictions import Predictions
from registry.evaluation.ranking import midranks_of_sorted

# scikit-learn's log_loss clips probabilities to [eps, 1 - eps] with the float64 machine epsilon.
PROBABILITY_CLIP = float(np.finfo(np.float64).eps)
CALIBRATION_EDGES = np.linspace(0.0, 1.0, 11)


@dataclass(frozen=True)
class CalibrationBin:
    """One tenth of the probability scale: how many rows fell in it, and how often they were 1."""

    lower: float
    upper: float
    count: int
    mean_score: float | None
    observed_rate: float | None


@dataclass(frozen=True)
class MetricReport:
    task: str
    n: int
    metrics: dict[str, float | None]
    threshold: float | None = None
    calibration: tuple[CalibrationBin, ...] = ()

    def to_dict(self) -> dict[str, Any]:
        document: dict[str, Any] = {"task": self.task, "n": self.n, "metrics": dict(self.metrics)}
        if self.threshold is not None:
            document["threshold"] = self.threshold
        if self.calibration:
            document["calibration"] = [bin_.__dict__.copy() for bin_ in self.calibration]
        return document


def compute_metrics(predictions: Predictions, *, threshold: float = 0.5,
                    with_calibration: bool = True) -> MetricReport:
    """Every metric of the task on all rows of the predictions."""
    labels, scores = predictions.labels, predictions.scores
    if predictions.task == "binary":
        order = np.argsort(scores)
        metrics = {
            "roc_auc": roc_auc(labels, scores, order=order),
            "average_precision": average_precision(labels, scores, order=order),
            "log_loss": binary_log_loss(labels, scores),
            "brier": brier(labels, scores),
            "accuracy": accuracy(labels, decide(scores, threshold)),
        }
        calibration = calibration_table(labels, scores) if with_calibration else ()
        return MetricReport("binary", len(predictions), metrics, threshold, calibration)
    if predictions.task == "regression":
        metrics = {"rmse": rmse(labels, scores), "mae": mae(labels, scores),
                   "r2": r2(labels, scores)}
        return MetricReport("regression", len(predictions), metrics)
    metrics = {
        "accuracy": accuracy(labels, np.argmax(scores, axis=1)),
        "macro_f1": macro_f1(labels, np.argmax(scores, axis=1)),
        "log_loss": multiclass_log_loss(labels, scores),
    }
    return MetricReport("multiclass", len(predictions), metrics)


def decide(scores: np.ndarray, threshold: float) -> np.ndarray:
    """Class 1 where the score reaches the threshold."""
    return (scores >= threshold).astype(np.int8)


def roc_auc(labels: np.ndarray, scores: np.ndarray, *, order: np.ndarray | None = None
            ) -> float | None:
    """Area under the ROC curve from midranks (Mann-Whitney U / (m n)); ties count one half."""
    positives = int(np.count_nonzero(labels))
    negatives = labels.shape[0] - positives
    if positives == 0 or negatives == 0:
        return None
    if order is None:
        order = np.argsort(scores)
    ranks = midranks_of_sorted(scores[order])
    positive_rank_sum = float(ranks[labels[order] == 1].sum())
    return (positive_rank_sum - positives * (positives + 1) / 2.0) / (positives * negatives)


def average_precision(labels: np.ndarray, scores: np.ndarray, *,
                      order: np.ndarray | None = None) -> float | None:
    """Sum over distinct thresholds, highest first, of (recall step) x precision.

    scikit-learn's average_precision_score: AP = sum_k (R_k - R_(k-1)) P_k, no interpolation.
    """
    if order is None:
        order = np.argsort(scores)
    descending = order[::-1]
    ordered_scores = scores[descending]
    hits = labels[descending].astype(np.int64)
    group_ends = np.flatnonzero(np.append(ordered_scores[1:] != ordered_scores[:-1], True))
    true_positives = np.cumsum(hits)[group_ends]
    if true_positives.shape[0] == 0 or true_positives[-1] == 0:
        return None
    predicted_positives = group_ends + 1
    precision = true_positives / predicted_positives
    recall_steps = np.diff(true_positives, prepend=0) / true_positives[-1]
    return float(np.dot(recall_steps, precision))


def binary_log_loss(labels: np.ndarray, scores: np.ndarray) -> float:
    return float(np.mean(binary_log_losses(labels, scores)))


def binary_log_losses(labels: np.ndarray, scores: np.ndarray) -> np.ndarray:
    """Per-row cross-entropy of the positive-class probability."""
    positive = np.clip(scores, PROBABILITY_CLIP, 1.0 - PROBABILITY_CLIP)
    negative = np.clip(1.0 - scores, PROBABILITY_CLIP, 1.0 - PROBABILITY_CLIP)
    return -np.where(labels == 1, np.log(positive), np.log(negative))


def brier(labels: np.ndarray, scores: np.ndarray) -> float:
    return float(np.mean((scores - labels) ** 2))


def accuracy(labels: np.ndarray, decisions: np.ndarray) -> float:
    return float(np.mean(labels == decisions))


def calibration_table(labels: np.ndarray, scores: np.ndarray) -> tuple[CalibrationBin, ...]:
    """Rows in tenths of the probability scale, each right-closed, the first also holding 0.

    The binning of scikit-learn's calibration_curve(strategy="uniform", n_bins=10).
    """
    bins = np.searchsorted(CALIBRATION_EDGES[1:-1], scores)
    counts = np.bincount(bins, minlength=10)
    score_sums = np.bincount(bins, weights=scores, minlength=10)
    label_sums = np.bincount(bins, weights=labels.astype(np.float64), minlength=10)
    table = []
    for k in range(10):
        count = int(counts[k])
        table.append(CalibrationBin(
            lower=round(float(CALIBRATION_EDGES[k]), 10),
            upper=round(float(CALIBRATION_EDGES[k + 1]), 10),
            count=count,
            mean_score=float(score_sums[k] / count) if count else None,
            observed_rate=float(label_sums[k] / count) if count else None,
        ))
    return tuple(table)


def rmse(labels: np.ndarray, predictions: np.ndarray) -> float:
    return float(np.sqrt(np.mean((predictions - labels) ** 2)))


def mae(labels: np.ndarray, predictions: np.ndarray) -> float:
    return float(np.mean(np.abs(predictions - labels)))


def r2(labels: np.ndarray, predictions: np.ndarray) -> float:
    """Coefficient of determination; constant labels give 1 for a perfect fit, else 0.

    The force_finite convention of scikit-learn's r2_score.
    """
    residual = float(np.sum((labels - predictions) ** 2))
    total = float(np.sum((labels - labels.mean()) ** 2))
    if total == 0.0:
        return 1.0 if residual == 0.0 else 0.0
    return 1.0 - residual / total


def macro_f1(labels: np.ndarray, decisions: np.ndarray) -> float:
    """Unweighted mean of per-class F1 over the classes that occur as labels or decisions."""
    classes = max(int(labels.max()), int(decisions.max())) + 1
    true_positive = np.bincount(labels[labels == decisions], minlength=classes)
    label_count = np.bincount(labels, minlength=classes)
    decision_count = np.bincount(decisions, minlength=classes)
    return f1_from_counts(true_positive, label_count, decision_count)


def f1_from_counts(true_positive: np.ndarray, label_count: np.ndarray,
                   decision_count: np.ndarray) -> float:
    present = (label_count + decision_count) > 0
    f1 = 2.0 * true_positive[present] / (label_count[present] + decision_count[present])
    return float(f1.mean())


def multiclass_log_loss(labels: np.ndarray, probabilities: np.ndarray) -> float:
    return float(np.mean(multiclass_log_losses(labels, probabilities)))


def multiclass_log_losses(labels: np.ndarray, probabilities: np.ndarray) -> np.ndarray:
    chosen = probabilities[np.arange(labels.shape[0]), labels]
    return -np.log(np.clip(chosen, PROBABILITY_CLIP, 1.0 - PROBABILITY_CLIP))
