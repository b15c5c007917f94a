"""DeLong's test: the fast algorithm against the 1988 definition, and a published worked example."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.stats import norm
from sklearn.metrics import roc_auc_score

from evaluation_data import binary_pair
from registry.evaluation import UndefinedMetric, auc_covariance, auc_standard_error
from registry.evaluation import delong_difference


def delong_1988_quadratic(labels: np.ndarray, score_columns: list[np.ndarray]):
    """DeLong, DeLong and Clarke-Pearson (1988), Biometrics 44:837-845, section 2, written out.

    psi(X, Y) = 1 if Y < X, 1/2 if Y = X, 0 if Y > X, for a positive X and a negative Y;
    V10(X_i) = (1/n) sum_j psi(X_i, Y_j), V01(Y_j) = (1/m) sum_i psi(X_i, Y_j);
    S10 and S01 are their sample covariance matrices (divisor m - 1, n - 1) and
    S = S10 / m + S01 / n. O(m n) memory and time: only for small tests.
    """
    v10, v01 = [], []
    for scores in score_columns:
        x = scores[labels == 1][:, None]
        y = scores[labels == 0][None, :]
        psi = (y < x) + 0.5 * (y == x)
        v10.append(psi.mean(axis=1))
        v01.append(psi.mean(axis=0))
    v10, v01 = np.array(v10), np.array(v01)
    m, n = v10.shape[1], v01.shape[1]
    aucs = v10.mean(axis=1)
    s10 = (v10 - aucs[:, None]) @ (v10 - aucs[:, None]).T / (m - 1)
    s01 = (v01 - aucs[:, None]) @ (v01 - aucs[:, None]).T / (n - 1)
    return aucs, s10 / m + s01 / n


@pytest.mark.parametrize("decimals", [None, 1, 2])
@pytest.mark.parametrize("seed", [11, 12, 13])
def test_fast_delong_equals_the_1988_definition(seed, decimals):
    candidate, baseline = binary_pair(seed, 700, decimals=decimals)
    labels = candidate.labels
    expected_aucs, expected_covariance = delong_1988_quadratic(
        labels, [candidate.scores, baseline.scores])
    result = auc_covariance(labels, [candidate.scores, baseline.scores])
    np.testing.assert_allclose(result.aucs, expected_aucs, rtol=1e-12)
    np.testing.assert_allclose(result.covariance, expected_covariance, rtol=1e-9, atol=1e-15)
    # and the AUCs are scikit-learn's roc_auc_score
    assert result.aucs[0] == pytest.approx(roc_auc_score(labels, candidate.scores), rel=1e-12)


def test_difference_interval_and_p_value_follow_from_the_covariance():
    candidate, baseline = binary_pair(14, 900, decimals=2)
    labels = candidate.labels
    aucs, s = delong_1988_quadratic(labels, [candidate.scores, baseline.scores])
    standard_error = math.sqrt(s[0, 0] + s[1, 1] - 2 * s[0, 1])
    z = (aucs[0] - aucs[1]) / standard_error
    result = delong_difference(labels, candidate.scores, baseline.scores, confidence=0.9)
    assert result.difference == pytest.approx(aucs[0] - aucs[1], rel=1e-12)
    assert result.standard_error == pytest.approx(standard_error, rel=1e-9)
    # DeLong et al. (1988): the difference is asymptotically normal; scipy.stats.norm as reference
    assert result.p_value == pytest.approx(2 * norm.sf(abs(z)), rel=1e-9)
    half_width = norm.ppf(0.95) * standard_error
    assert result.ci_low == pytest.approx(result.difference - half_width, rel=1e-9)
    assert result.ci_high == pytest.approx(result.difference + half_width, rel=1e-9)


def test_identical_scores_differ_by_nothing_with_p_value_one():
    candidate, _ = binary_pair(15, 300)
    result = delong_difference(candidate.labels, candidate.scores, candidate.scores.copy())
    assert (result.difference, result.ci_low, result.ci_high, result.p_value) == (0, 0, 0, 1)


def test_too_few_rows_of_a_class_make_the_test_undefined():
    labels = np.array([1, 0, 0, 0])
    with pytest.raises(UndefinedMetric):
        delong_difference(labels, np.array([0.9, 0.1, 0.2, 0.3]), np.array([0.5, 0.4, 0.3, 0.2]))


def test_auc_and_standard_error_of_the_hanley_mcneil_1982_worked_example():
    # Hanley and McNeil (1982), The meaning and use of the area under a receiver operating
    # characteristic (ROC) curve, Radiology 143:29-36, Table I: ratings of 109 CT images on a
    # five-point scale (1 definitely normal .. 5 definitely abnormal). Reproduced from memory:
    # 58 truly normal images rated 33, 6, 6, 11, 2 and 51 truly abnormal images rated
    # 3, 2, 2, 11, 33; the paper reports the area W = 0.893 and its standard error 0.032.
    normal = np.repeat(np.arange(1, 6), [33, 6, 6, 11, 2])
    abnormal = np.repeat(np.arange(1, 6), [3, 2, 2, 11, 33])
    labels = np.concatenate([np.zeros(normal.size, dtype=int), np.ones(abnormal.size, dtype=int)])
    ratings = np.concatenate([normal, abnormal]).astype(float)

    area = auc_covariance(labels, [ratings]).aucs[0]
    assert round(area, 3) == 0.893

    # The paper's 0.032 comes from its closed form (eq. 1, Q1 = A/(2-A), Q2 = 2A^2/(1+A)):
    q1, q2 = area / (2 - area), 2 * area**2 / (1 + area)
    n_abnormal, n_normal = abnormal.size, normal.size
    closed_form = math.sqrt((area * (1 - area) + (n_abnormal - 1) * (q1 - area**2)
                             + (n_normal - 1) * (q2 - area**2)) / (n_abnormal * n_normal))
    assert round(closed_form, 3) == 0.032
    # DeLong's estimate uses the data's own structural components instead of the exponential
    # approximation behind Q1 and Q2, so it agrees to within a few thousandths (0.0307 here).
    assert auc_standard_error(labels, ratings) == pytest.approx(0.032, abs=0.002)
    expected = math.sqrt(delong_1988_quadratic(labels, [ratings])[1][0, 0])
    assert auc_standard_error(labels, ratings) == pytest.approx(expected, rel=1e-12)
