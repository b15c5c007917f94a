"""Paired comparison on shared rows, per slice, with Holm's step-down adjustment."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.stats import binomtest

from evaluation_data import binary_pair, multiclass_pair, regression_pair
from registry.evaluation import (
    Predictions, PredictionsError, compare, compare_slices, delong_difference, holm_adjust)


def test_holm_adjustment_follows_the_step_down_definition():
    # Holm (1979), Scand. J. Statist. 6:65-70: sorted p_(1) <= ... <= p_(m) are adjusted to
    # max_{j <= i} min(1, (m - j + 1) p_(j)); worked here by hand for four p-values.
    assert holm_adjust([0.01, 0.04, 0.03, 0.005]) == pytest.approx([0.03, 0.06, 0.06, 0.02])
    assert holm_adjust([0.5, None, 0.2]) == [pytest.approx(0.5), None, pytest.approx(0.4)]
    assert holm_adjust([]) == []
    assert holm_adjust([0.9, 0.8]) == [1.0, 1.0]


def test_comparison_joins_on_row_id_and_counts_unmatched_rows():
    candidate, baseline = binary_pair(41, 1_000)
    shuffled = baseline.take(np.random.default_rng(0).permutation(1_000)[:900])
    extra = Predictions("binary", np.asarray(["X-1", "X-2"]), np.array([0, 1], dtype=np.int8),
                        np.array([0.2, 0.8]), ("0", "1"), {"district": np.asarray(["A", "B"])})
    widened = Predictions(
        "binary", np.concatenate([shuffled.row_ids, extra.row_ids]),
        np.concatenate([shuffled.labels, extra.labels]),
        np.concatenate([shuffled.scores, extra.scores]), ("0", "1"), {})
    report = compare(candidate, widened, resamples=200)
    assert (report.matching.matched, report.matching.candidate_only,
            report.matching.baseline_only) == (900, 100, 2)
    # The same rows in any order give the same DeLong result as the aligned rows.
    kept = np.isin(candidate.row_ids, shuffled.row_ids)
    aligned = delong_difference(candidate.labels[kept], candidate.scores[kept],
                                baseline.scores[kept])
    assert report.differences["roc_auc"].difference == pytest.approx(aligned.difference)
    assert report.differences["roc_auc"].method == "delong"


def test_accuracy_p_value_is_mcnemars_on_the_discordant_rows():
    candidate, baseline = binary_pair(42, 2_000)
    report = compare(candidate, baseline, resamples=200)
    right_c = (candidate.scores >= 0.5) == candidate.labels
    right_b = (baseline.scores >= 0.5) == baseline.labels
    b, c = int(np.sum(right_c & ~right_b)), int(np.sum(~right_c & right_b))
    expected = binomtest(b, b + c, 0.5).pvalue  # scipy.stats.binomtest, two-sided
    accuracy = report.differences["accuracy"]
    assert accuracy.p_value == pytest.approx(expected, rel=1e-8)
    assert accuracy.method == "mcnemar-exact"
    assert accuracy.difference == pytest.approx((b - c) / 2_000)


@pytest.mark.parametrize("pair", [binary_pair(43, 500), regression_pair(44, 500),
                                  multiclass_pair(45, 500)], ids=["binary", "regression",
                                                                  "multiclass"])
def test_every_metric_of_the_task_gets_a_difference_with_interval_and_p_value(pair):
    report = compare(*pair, resamples=200, seed=3)
    document = report.to_dict()
    assert set(document) == set(report.candidate.metrics)
    for name, entry in document.items():
        assert list(entry) == ["difference", "ci_low", "ci_high", "p_value", "method"]
        assert entry["ci_low"] <= entry["difference"] <= entry["ci_high"] or \
            entry["method"] == "mcnemar-exact"
        assert 0.0 <= entry["p_value"] <= 1.0
        assert entry["difference"] == pytest.approx(
            report.candidate.metrics[name] - report.baseline.metrics[name])


def test_comparison_is_reproducible_from_the_seed():
    candidate, baseline = binary_pair(46, 800)
    first = compare(candidate, baseline, resamples=300, seed=9).to_dict()
    again = compare(candidate, baseline, resamples=300, seed=9).to_dict()
    other = compare(candidate, baseline, resamples=300, seed=10).to_dict()
    assert first == again and first != other


def test_multiclass_baseline_with_columns_in_another_order_is_aligned():
    candidate, baseline = multiclass_pair(47, 300, classes=("LOW", "MODERATE", "HIGH"))
    order = [2, 0, 1]
    reordered = Predictions("multiclass", baseline.row_ids, np.argsort(order)[baseline.labels],
                            baseline.scores[:, order], tuple(baseline.classes[k] for k in order))
    assert compare(candidate, reordered, resamples=100).to_dict() == compare(
        candidate, baseline, resamples=100).to_dict()


def test_rows_with_different_labels_in_the_baseline_are_refused():
    candidate, baseline = binary_pair(48, 100)
    flipped = Predictions("binary", baseline.row_ids, 1 - baseline.labels, baseline.scores,
                          ("0", "1"))
    with pytest.raises(PredictionsError, match="different label"):
        compare(candidate, flipped)


def test_slices_compare_each_value_and_adjust_p_values_across_slices():
    candidate, baseline = binary_pair(49, 2_500)
    report = compare_slices(candidate, baseline, "district", resamples=200, seed=1)
    assert sorted(report.values) == sorted(set(candidate.extra_columns["district"].tolist()))
    for name in ("roc_auc", "brier", "accuracy"):
        raw = [report.values[v].differences[name].p_value for v in report.values]
        adjusted = [report.values[v].differences[name].p_value_holm for v in report.values]
        assert adjusted == pytest.approx(holm_adjust(raw))
    # A slice's DeLong difference is the one on that slice's rows alone.
    rows = candidate.extra_columns["district"] == "RIVERSIDE"
    alone = delong_difference(candidate.labels[rows], candidate.scores[rows],
                              baseline.scores[rows])
    assert report.values["RIVERSIDE"].differences["roc_auc"].difference == pytest.approx(
        alone.difference)
    assert sum(result.n for result in report.values.values()) == 2_500


def test_a_slice_with_one_class_reports_what_it_can():
    candidate, baseline = binary_pair(50, 400)
    district = candidate.extra_columns["district"].copy()
    district[candidate.labels == 1] = np.where(
        district[candidate.labels == 1] == "SALTMARSH", "NORTHGATE",
        district[candidate.labels == 1])
    candidate = Predictions("binary", candidate.row_ids, candidate.labels, candidate.scores,
                            candidate.classes, {"district": district})
    report = compare_slices(candidate, baseline, "district", resamples=100)
    saltmarsh = report.values["SALTMARSH"]
    assert saltmarsh.metrics["roc_auc"] is None
    assert saltmarsh.differences["roc_auc"] is None
    assert saltmarsh.differences["brier"] is not None
