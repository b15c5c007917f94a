"""The feature-meaning gate alone on hand-made feature diffs."""

from gates_helpers import (INES, MARA, TOMAS, acknowledgement, judge, passing_evidence, waive,
                           without_incumbent)
from registry.gates import FeatureChange

REPAIRS_ADDED = FeatureChange("repairs_5y", "field-added", "safe",
                              "new feature repairs_5y with default 0")
DOMAIN_WIDENED = FeatureChange("pipe_age_years", "range-widened", "needs-review",
                               "range widened from [0, 120] to [0, 150]")
UNIT_CHANGED = FeatureChange("mean_pressure_psi", "unit-changed", "breaking",
                             "unit changed from kPa to [psi]")


def test_safe_changes_pass():
    result = judge("feature-meaning", passing_evidence(feature_changes=(REPAIRS_ADDED,)))
    assert result.passed
    assert "none breaking" in result.summary
    assert result.evidence["changes"][0]["field"] == "repairs_5y"


def test_no_change_passes():
    assert judge("feature-meaning", passing_evidence()).passed


def test_breaking_change_fails_naming_the_feature():
    result = judge("feature-meaning", passing_evidence(
        feature_changes=(REPAIRS_ADDED, UNIT_CHANGED)))
    assert not result.passed
    assert result.summary.startswith("mean_pressure_psi: unit changed from kPa to [psi]")


def test_needs_review_change_without_acknowledgement_fails_naming_the_feature():
    result = judge("feature-meaning", passing_evidence(feature_changes=(DOMAIN_WIDENED,)))
    assert not result.passed
    assert result.summary.startswith("pipe_age_years: ")
    assert "acknowledgement" in result.summary


def test_needs_review_change_acknowledged_by_an_approver_passes():
    result = judge("feature-meaning", passing_evidence(
        feature_changes=(DOMAIN_WIDENED,), acknowledgements=(acknowledgement("pipe_age_years"),)))
    assert result.passed
    assert result.evidence["changes"][0]["acknowledged_by"] == ["priya.raman"]


def test_acknowledgement_by_the_author_or_a_non_approver_does_not_count():
    result = judge("feature-meaning", passing_evidence(
        feature_changes=(DOMAIN_WIDENED,),
        acknowledgements=(acknowledgement("pipe_age_years", INES),
                          acknowledgement("pipe_age_years", MARA))))
    assert not result.passed
    assert any("the author cannot acknowledge" in note for note in result.notes)
    assert any("does not hold the approver role" in note for note in result.notes)


def test_acknowledgement_of_another_feature_does_not_count():
    result = judge("feature-meaning", passing_evidence(
        feature_changes=(DOMAIN_WIDENED,), acknowledgements=(acknowledgement("diameter_mm"),)))
    assert not result.passed


def test_needs_review_change_passes_when_the_policy_asks_no_acknowledgement():
    result = judge("feature-meaning", passing_evidence(feature_changes=(DOMAIN_WIDENED,)),
                   require_acknowledgement=False)
    assert result.passed


def test_acknowledgement_does_not_clear_a_breaking_change():
    result = judge("feature-meaning", passing_evidence(
        feature_changes=(UNIT_CHANGED,), acknowledgements=(acknowledgement("mean_pressure_psi"),)))
    assert not result.passed


def test_feature_meaning_passes_with_a_note_when_there_is_no_incumbent():
    result = judge("feature-meaning", without_incumbent(passing_evidence()))
    assert result.passed
    assert any("nothing to compare against" in note for note in result.notes)


def test_failed_feature_meaning_can_be_waived_by_an_approver():
    result = judge("feature-meaning", passing_evidence(feature_changes=(UNIT_CHANGED,)),
                   waivers=waive("feature-meaning", "psi conversion verified downstream"),
                   actor=TOMAS)
    assert result.waived and result.cleared
    assert result.waiver.reason == "psi conversion verified downstream"
