"""Every metric against scikit-learn (the reference named in DESIGN.md) on generated data."""

from __future__ import annotations

import numpy as np
import pytest
from sklearn import metrics as sk
from sklearn.calibration import calibration_curve

from evaluation_data import binary_pair, multiclass_pair, regression_pair
from registry.evaluation import compute_metrics
from registry.evaluation.metrics import average_precision, roc_auc


@pytest.mark.parametrize("decimals", [None, 1, 2])
@pytest.mark.parametrize("seed", [1, 2])
def test_binary_metrics_match_scikit_learn_with_and_without_ties(seed, decimals):
    predictions, _ = binary_pair(seed, 3_000, decimals=decimals)
    y, p = predictions.labels, predictions.scores
    report = compute_metrics(predictions, threshold=0.5).metrics
    # scikit-learn: roc_auc_score, average_precision_score, log_loss, brier_score_loss,
    # accuracy_score (a score at or above the threshold decides class 1).
    assert report["roc_auc"] == pytest.approx(sk.roc_auc_score(y, p), rel=1e-12)
    assert report["average_precision"] == pytest.approx(sk.average_precision_score(y, p),
                                                        rel=1e-12)
    assert report["log_loss"] == pytest.approx(sk.log_loss(y, p), rel=1e-12)
    assert report["brier"] == pytest.approx(sk.brier_score_loss(y, p), rel=1e-12)
    assert report["accuracy"] == pytest.approx(sk.accuracy_score(y, p >= 0.5), rel=1e-12)


@pytest.mark.parametrize("threshold", [0.2, 0.5, 0.73])
def test_accuracy_uses_the_threshold_like_a_decision_at_or_above_it(threshold):
    predictions, _ = binary_pair(3, 1_000, decimals=2)
    report = compute_metrics(predictions, threshold=threshold).metrics
    expected = sk.accuracy_score(predictions.labels, predictions.scores >= threshold)
    assert report["accuracy"] == pytest.approx(expected)


def test_heavy_ties_and_extreme_probabilities_match_scikit_learn():
    rng = np.random.default_rng(7)
    y = rng.integers(0, 2, 500)
    p = rng.choice([0.0, 0.25, 0.5, 1.0], 500)
    order = np.argsort(p)
    # scikit-learn: ties count one half in the AUC; log_loss clips to [eps, 1 - eps].
    assert roc_auc(y, p) == pytest.approx(sk.roc_auc_score(y, p), rel=1e-12)
    assert average_precision(y, p, order=order) == pytest.approx(
        sk.average_precision_score(y, p), rel=1e-12)
    from registry.evaluation.metrics import binary_log_loss
    assert binary_log_loss(y, p) == pytest.approx(sk.log_loss(y, p), rel=1e-12)


def test_calibration_table_matches_scikit_learn_uniform_tenths():
    predictions, _ = binary_pair(4, 5_000, decimals=1)  # many scores sit exactly on bin edges
    table = compute_metrics(predictions).calibration
    observed, mean_score = calibration_curve(predictions.labels, predictions.scores,
                                             n_bins=10, strategy="uniform")
    filled = [b for b in table if b.count]
    assert [b.observed_rate for b in filled] == pytest.approx(list(observed), rel=1e-12)
    assert [b.mean_score for b in filled] == pytest.approx(list(mean_score), rel=1e-12)
    assert sum(b.count for b in table) == len(predictions)
    assert [b.lower for b in table] == pytest.approx([k / 10 for k in range(10)])


def test_regression_metrics_match_scikit_learn():
    predictions, _ = regression_pair(5, 2_000)
    y, p = predictions.labels, predictions.scores
    report = compute_metrics(predictions).metrics
    assert report["rmse"] == pytest.approx(np.sqrt(sk.mean_squared_error(y, p)), rel=1e-12)
    assert report["mae"] == pytest.approx(sk.mean_absolute_error(y, p), rel=1e-12)
    assert report["r2"] == pytest.approx(sk.r2_score(y, p), rel=1e-12)


def test_r2_of_constant_labels_follows_scikit_learn_force_finite():
    from registry.evaluation.metrics import r2
    y = np.full(5, 3.0)
    assert r2(y, y) == sk.r2_score(y, y) == 1.0
    assert r2(y, y + 1.0) == sk.r2_score(y, y + 1.0) == 0.0


@pytest.mark.parametrize("seed", [6, 8])
def test_multiclass_metrics_match_scikit_learn(seed):
    predictions, _ = multiclass_pair(seed, 2_500, classes=("A", "B", "C", "D"))
    y, p = predictions.labels, predictions.scores
    decided = np.argmax(p, axis=1)
    report = compute_metrics(predictions).metrics
    assert report["accuracy"] == pytest.approx(sk.accuracy_score(y, decided), rel=1e-12)
    assert report["macro_f1"] == pytest.approx(sk.f1_score(y, decided, average="macro"),
                                               rel=1e-12)
    assert report["log_loss"] == pytest.approx(sk.log_loss(y, p, labels=[0, 1, 2, 3]),
                                               rel=1e-12)


def test_macro_f1_averages_over_classes_that_occur_as_in_scikit_learn():
    from registry.evaluation.metrics import macro_f1
    y = np.array([0, 0, 1, 1, 3])  # class 2 never occurs, as label or decision
    d = np.array([0, 1, 1, 1, 0])
    assert macro_f1(y, d) == pytest.approx(sk.f1_score(y, d, average="macro"))
