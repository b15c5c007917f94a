"""DeLong's test for the difference of two correlated ROC AUCs, in O(n log n).

DeLong, DeLong and Clarke-Pearson (1988), Comparing the areas under two or more correlated
receiver operating characteristic curves: a nonparametric approach, Biometrics 44(3):837-845;
the structural components computed from midranks as in Sun and Xu (2014), Fast implementation
of DeLong's algorithm for comparing the areas under correlated receiver operating characteristic
curves, IEEE Signal Processing Letters 21(11):1389-1393.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from statistics import NormalDist

import numpy as np

from registry.evaluation.predictions import UndefinedMetric
from registry.evaluation.ranking import midranks_of_sorted


@dataclass(frozen=True)
class AucCovariance:
    """AUCs of several score columns on the same rows, and DeLong's covariance of them."""

    aucs: np.ndarray
    covariance: np.ndarray


@dataclass(frozen=True)
class AucDifference:
    candidate: float
    baseline: float
    difference: float
    standard_error: float
    ci_low: float
    ci_high: float
    p_value: float


def structural_components(labels: np.ndarray, scores: np.ndarray
                          ) -> tuple[np.ndarray, np.ndarray]:
    """DeLong's V10 (one per positive row) and V01 (one per negative row), in row order.

    Sun and Xu (2014), eq. for the placement values: with T_Z the midranks over all rows and
    T_X, T_Y the midranks within positives and within negatives,
    V10_i = (T_Z(i) - T_X(i)) / n and V01_j = 1 - (T_Z(j) - T_Y(j)) / m.
    One sort serves all three rankings: filtering the sorted order by class keeps it sorted.
    """
    is_positive = labels == 1
    positives = int(np.count_nonzero(is_positive))
    negatives = labels.shape[0] - positives
    order = np.argsort(scores)
    ordered = scores[order]
    positive_in_order = is_positive[order]
    overall = midranks_of_sorted(ordered)
    within_positive = midranks_of_sorted(ordered[positive_in_order])
    within_negative = midranks_of_sorted(ordered[~positive_in_order])

    placement = np.empty(labels.shape[0], dtype=np.float64)
    placement[order[positive_in_order]] = (overall[positive_in_order] - within_positive) / negatives
    placement[order[~positive_in_order]] = 1.0 - (
        overall[~positive_in_order] - within_negative) / positives
    return placement[is_positive], placement[~is_positive]


def auc_covariance(labels: np.ndarray, score_columns: list[np.ndarray]) -> AucCovariance:
    """AUCs and their DeLong covariance matrix S = S10 / m + S01 / n."""
    positives = int(np.count_nonzero(labels == 1))
    negatives = labels.shape[0] - positives
    if positives < 2 or negatives < 2:
        raise UndefinedMetric(
            f"DeLong's test needs at least two rows of each class; found {positives} "
            f"positive and {negatives} negative", place="column label")
    components = [structural_components(labels, scores) for scores in score_columns]
    v10 = np.vstack([c[0] for c in components])
    v01 = np.vstack([c[1] for c in components])
    aucs = v10.mean(axis=1)
    covariance = (np.atleast_2d(np.cov(v10)) / positives
                  + np.atleast_2d(np.cov(v01)) / negatives)
    return AucCovariance(aucs=aucs, covariance=covariance)


def auc_standard_error(labels: np.ndarray, scores: np.ndarray) -> float:
    """DeLong's standard error of one AUC."""
    return math.sqrt(float(auc_covariance(labels, [scores]).covariance[0, 0]))


def delong_difference(labels: np.ndarray, candidate: np.ndarray, baseline: np.ndarray, *,
                      confidence: float = 0.95) -> AucDifference:
    """AUC(candidate) - AUC(baseline) with a normal interval and a two-sided p-value."""
    result = auc_covariance(labels, [candidate, baseline])
    difference = float(result.aucs[0] - result.aucs[1])
    c = result.covariance
    variance = max(float(c[0, 0] + c[1, 1] - 2.0 * c[0, 1]), 0.0)
    error = math.sqrt(variance)
    z_critical = NormalDist().inv_cdf(0.5 + confidence / 2.0)
    if error > 0.0:
        p_value = math.erfc(abs(difference) / error / math.sqrt(2.0))
    else:
        p_value = 1.0 if difference == 0.0 else 0.0
    return AucDifference(
        candidate=float(result.aucs[0]), baseline=float(result.aucs[1]),
        difference=difference, standard_error=error,
        ci_low=difference - z_critical * error, ci_high=difference + z_critical * error,
        p_value=p_value)
