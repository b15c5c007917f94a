"""Live quality: the task's metrics on served rows whose outcomes arrived, with an interval for
the metric that decides `degrading`.

The metrics are the evaluation package's (scikit-learn's definitions). Intervals: the AUC's
DeLong interval (DeLong, DeLong and Clarke-Pearson 1988, as registry.evaluation.delong);
accuracy's Wilson score interval (Wilson 1927); the mean absolute error's normal interval.
"""

from __future__ import annotations

import math
from statistics import NormalDist

import numpy as np

from registry.after_release.states import LiveQuality
from registry.evaluation import Predictions, UndefinedMetric, compute_metrics
from registry.evaluation.delong import auc_standard_error

INTERVAL_METRICS = ("roc_auc", "accuracy", "mae")


def _z(confidence: float) -> float:
    return NormalDist().inv_cdf(0.5 + confidence / 2)


def live_quality(task: str, labels: np.ndarray, scores: np.ndarray, classes: tuple[str, ...],
                 metric: str, *, threshold: float = 0.5, confidence: float = 0.95
                 ) -> LiveQuality:
    rows = int(len(labels))
    predictions = Predictions(task=task, row_ids=np.arange(rows), labels=labels, scores=scores,
                              classes=classes)
    try:
        metrics = compute_metrics(predictions, threshold=threshold,
                                  with_calibration=False).metrics
    except UndefinedMetric as error:
        return LiveQuality(rows, {}, metric, None, notes=(error.message,))
    value = metrics.get(metric)
    z = _z(confidence)
    try:
        if metric == "roc_auc" and task == "binary":
            # raises unless both classes occur, so the AUC itself is known below
            standard_error = auc_standard_error(labels, scores)
            if value is not None:
                return LiveQuality(rows, metrics, metric, value, value - z * standard_error,
                                   value + z * standard_error, "delong")
    except UndefinedMetric as error:
        return LiveQuality(rows, metrics, metric, value, notes=(error.message,))
    if metric == "accuracy" and value is not None:
        low, high = wilson(value, rows, z)
        return LiveQuality(rows, metrics, metric, value, low, high, "wilson")
    if metric == "mae" and value is not None and rows > 1:
        errors = np.abs(labels - scores)
        half = z * float(errors.std(ddof=1)) / math.sqrt(rows)
        return LiveQuality(rows, metrics, metric, value, value - half, value + half, "normal")
    return LiveQuality(rows, metrics, metric, value,
                       notes=(f"no interval for {metric}; the state is judged on "
                              f"{', '.join(INTERVAL_METRICS)}",))


def wilson(share: float, n: int, z: float) -> tuple[float, float]:
    """Wilson's score interval for a proportion (Wilson, JASA 22:209-212, 1927)."""
    centre = (share + z * z / (2 * n)) / (1 + z * z / n)
    half = z * math.sqrt(share * (1 - share) / n + z * z / (4 * n * n)) / (1 + z * z / n)
    return centre - half, centre + half
