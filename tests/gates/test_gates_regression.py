"""The quality gates alone on hand-made paired comparisons: no-regression and slice-guard, and
the Holm-Bonferroni adjustment behind the slice gate."""

from statistics import NormalDist

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from gates_helpers import (DISTRICTS, comparison, district_slice, judge, passing_evidence, waive,
                           without_incumbent)


def test_no_regression_passes_when_the_harmful_bound_stays_within_the_margin():
    result = judge("no-regression", passing_evidence(
        comparisons=(comparison(difference=-0.002, ci_low=-0.009, ci_high=0.005),)))
    assert result.passed
    assert result.summary.startswith("roc_auc: ")
    assert result.evidence["comparisons"][0]["verdict"] == "not-worse"


def test_no_regression_fails_naming_the_metric_when_the_lower_bound_passes_minus_margin():
    result = judge("no-regression", passing_evidence(
        comparisons=(comparison(difference=-0.004, ci_low=-0.015, ci_high=0.007),)))
    assert not result.passed
    assert result.summary.startswith("roc_auc: ")
    assert "by more than the margin 0.01" in result.summary
    assert result.evidence["comparisons"][0]["harmful_bound"] == -0.015


def test_a_larger_margin_tolerates_the_same_interval():
    evidence = passing_evidence(
        comparisons=(comparison(difference=-0.004, ci_low=-0.015, ci_high=0.007),))
    assert judge("no-regression", evidence, margin=0.02).passed


def test_for_a_lower_is_better_metric_the_upper_bound_is_the_harmful_one():
    worse = comparison("log_loss", difference=0.004, ci_low=-0.002, ci_high=0.012,
                       higher_is_better=False, method="paired-bootstrap")
    result = judge("no-regression", passing_evidence(comparisons=(worse,)), metric="log_loss")
    assert not result.passed
    assert result.summary.startswith("log_loss: ")
    better = comparison("log_loss", difference=-0.01, ci_low=-0.02, ci_high=0.0,
                        higher_is_better=False)
    assert judge("no-regression", passing_evidence(comparisons=(better,)),
                 metric="log_loss").passed


def test_metrics_on_different_datasets_are_never_compared_and_the_gate_says_so():
    result = judge("no-regression", passing_evidence(
        comparisons=(comparison(incumbent_dataset="sha256:an-older-evaluation-set"),)))
    assert not result.passed
    assert "different datasets are never compared" in result.summary
    assert "sha256:an-older-evaluation-set" in result.summary
    assert result.evidence["comparisons"][0]["verdict"] == "different-datasets"


def test_a_missing_comparison_on_the_chosen_metric_fails_naming_it():
    result = judge("no-regression", passing_evidence(), metric="average_precision")
    assert not result.passed
    assert result.summary.startswith("average_precision: no paired comparison")
    assert result.evidence["available"] == ["roc_auc"]


def test_interval_at_another_confidence_is_rescaled_by_the_normal_quantiles():
    # A symmetric 95 % interval of half-width 1.96 * se, judged at 99 %: half-width 2.576 * se.
    se = 0.004
    z95, z99 = NormalDist().inv_cdf(0.975), NormalDist().inv_cdf(0.995)
    evidence = passing_evidence(comparisons=(comparison(
        difference=0.0, ci_low=-z95 * se, ci_high=z95 * se, confidence=0.95),))
    assert judge("no-regression", evidence, confidence=0.95).passed  # -0.0078 > -0.01
    result = judge("no-regression", evidence, confidence=0.99)  # -0.0103 < -0.01
    assert not result.passed
    assert result.evidence["comparisons"][0]["judged_ci_low"] == pytest.approx(-z99 * se)
    assert any("rescaled" in note for note in result.notes)


def test_no_regression_passes_with_a_note_when_there_is_no_incumbent():
    result = judge("no-regression", without_incumbent(passing_evidence()))
    assert result.passed
    assert any("nothing to compare against" in note for note in result.notes)


def test_failed_no_regression_can_be_waived():
    result = judge("no-regression", passing_evidence(
        comparisons=(comparison(difference=-0.02, ci_low=-0.03, ci_high=-0.01),)),
        waivers=waive("no-regression"))
    assert result.waived and result.cleared


# Holm-Bonferroni

# slice-guard

def test_slice_guard_passes_when_no_slice_regresses():
    result = judge("slice-guard", passing_evidence())
    assert result.passed
    assert "no slice of 5" in result.summary


def test_slice_guard_fails_naming_the_slice_that_regresses_significantly():
    slices = tuple(district_slice(v) for v in DISTRICTS if v != "OLD_TOWN") + (
        district_slice("OLD_TOWN", difference=-0.06, p_value=0.001),)
    result = judge("slice-guard", passing_evidence(slices=slices))
    assert not result.passed
    assert result.summary.startswith("slice district=OLD_TOWN: roc_auc worse by 0.0600")
    # Holm: the smallest of five p-values is multiplied by 5.
    assert "Holm-adjusted p = 0.005" in result.summary


def test_a_slice_significant_only_before_adjustment_does_not_fail():
    slices = tuple(district_slice(v, p_value=0.6) for v in DISTRICTS if v != "OLD_TOWN") + (
        district_slice("OLD_TOWN", difference=-0.06, p_value=0.02),)
    result = judge("slice-guard", passing_evidence(slices=slices))
    assert result.passed  # 0.02 < 0.05 raw, but 5 * 0.02 = 0.1 after Holm-Bonferroni
    assert any("OLD_TOWN" in note and "not significant" in note for note in result.notes)


def test_a_significant_worsening_within_the_margin_does_not_fail():
    slices = (district_slice("OLD_TOWN", difference=-0.01, p_value=0.0001),)
    assert judge("slice-guard", passing_evidence(slices=slices)).passed


def test_a_slice_may_have_its_own_margin():
    slices = (district_slice("OLD_TOWN", difference=-0.04, p_value=0.001),)
    evidence = passing_evidence(slices=slices)
    assert not judge("slice-guard", evidence).passed
    assert judge("slice-guard", evidence, slice_margins={"OLD_TOWN": 0.05}).passed


def test_adjusted_p_values_supplied_by_the_evaluation_are_used():
    slices = (district_slice("OLD_TOWN", difference=-0.06, p_value=0.001,
                             adjusted_p_value=0.2),)
    result = judge("slice-guard", passing_evidence(slices=slices))
    assert result.passed
    assert result.evidence["slices"][0]["adjusted_p_value"] == 0.2


def test_slice_guard_fails_when_no_slice_comparison_was_supplied():
    result = judge("slice-guard", passing_evidence(slices=()))
    assert not result.passed
    assert result.summary.startswith("roc_auc: no slice comparison")


def test_slice_guard_passes_with_a_note_when_there_is_no_incumbent():
    result = judge("slice-guard", without_incumbent(passing_evidence()))
    assert result.passed
    assert any("nothing to compare against" in note for note in result.notes)


def test_failed_slice_guard_can_be_waived():
    slices = (district_slice("OLD_TOWN", difference=-0.06, p_value=0.001),)
    result = judge("slice-guard", passing_evidence(slices=slices), waivers=waive("slice-guard"))
    assert result.waived and result.cleared
