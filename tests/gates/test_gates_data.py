"""The data gates alone on hand-made evidence: no-leakage, fresh-data, lineage-complete."""

import dataclasses

import pytest

from gates_helpers import judge, passing_evidence, waive
from registry.gates import ContainmentEstimate, DatasetRecord, EvidenceError, RecalledDataset


def overlap(containment: float, error_bound: float = 0.031) -> tuple[ContainmentEstimate]:
    return (ContainmentEstimate("brackwater-training-set", "brackwater-evaluation-set",
                                containment=containment, error_bound=error_bound),)


# no-leakage

def test_no_leakage_passes_when_containment_is_within_the_limit():
    result = judge("no-leakage", passing_evidence())
    assert result.passed
    assert "brackwater-evaluation-set in brackwater-training-set" in result.summary


def test_no_leakage_fails_naming_both_datasets_and_the_containment():
    result = judge("no-leakage", passing_evidence(containment=overlap(0.18)))
    assert not result.passed
    assert result.summary.startswith("containment of brackwater-evaluation-set in "
                                     "brackwater-training-set is 0.1800")
    assert result.evidence["estimates"][0]["verdict"] == "leaks"


def test_counting_the_error_bound_fails_an_estimate_that_could_be_above_the_limit():
    evidence = passing_evidence(containment=overlap(0.005, error_bound=0.01))
    plain = judge("no-leakage", evidence)
    assert plain.passed
    assert any("within the estimate's error bound" in note for note in plain.notes)
    assert not judge("no-leakage", evidence, include_error_bound=True).passed


def test_no_leakage_fails_without_an_overlap_estimate():
    result = judge("no-leakage", passing_evidence(containment=()))
    assert not result.passed
    assert "no overlap estimate" in result.summary


def test_failed_no_leakage_can_be_waived():
    result = judge("no-leakage", passing_evidence(containment=overlap(0.5)),
                   waivers=waive("no-leakage"))
    assert result.waived and result.cleared


# fresh-data

def training(registered_at: str | None, data_as_of: str | None = None,
             registered: bool = True) -> tuple[DatasetRecord, ...]:
    return (DatasetRecord("brackwater-training-set", "training", registered,
                          registered_at=registered_at, data_as_of=data_as_of),
            DatasetRecord("brackwater-evaluation-set", "evaluation", True,
                          registered_at="2026-11-20T08:05:00Z"))


def test_fresh_data_passes_for_recent_training_data():
    result = judge("fresh-data", passing_evidence())
    assert result.passed
    assert "brackwater-training-set is 11 days old" in result.summary


def test_fresh_data_fails_naming_the_dataset_and_its_age():
    result = judge("fresh-data", passing_evidence(datasets=training("2026-10-01T09:00:00Z")),
                   max_age_days=30)
    assert not result.passed
    assert result.summary.startswith("dataset brackwater-training-set is 61 days old")
    assert "limit of 30 days" in result.summary


def test_fresh_data_prefers_the_time_of_the_newest_record():
    evidence = passing_evidence(datasets=training("2026-11-30T09:00:00Z",
                                                  data_as_of="2025-06-01T00:00:00Z"))
    result = judge("fresh-data", evidence)
    assert not result.passed
    assert "newest record" in result.summary


def test_fresh_data_fails_when_the_age_is_unknown():
    result = judge("fresh-data", passing_evidence(datasets=training(None, registered=False)))
    assert not result.passed
    assert "age is unknown" in result.summary


def test_fresh_data_fails_without_a_training_dataset():
    evidence = passing_evidence(datasets=training("2026-11-20T08:00:00Z")[1:])
    assert not judge("fresh-data", evidence).passed


def test_fresh_data_with_a_malformed_time_is_an_evidence_error():
    with pytest.raises(EvidenceError) as caught:
        judge("fresh-data", passing_evidence(datasets=training("last tuesday")))
    assert caught.value.place == "dataset brackwater-training-set"


def test_failed_fresh_data_can_be_waived():
    result = judge("fresh-data", passing_evidence(datasets=training("2020-01-01T00:00:00Z")),
                   waivers=waive("fresh-data"))
    assert result.waived and result.cleared


# lineage-complete

TELEMETRY_RECALL = RecalledDataset(
    "brackwater-telemetry-extract", "sensor calibration fault", "2026-11-28T14:00:00Z",
    via=("brackwater-telemetry-extract", "brackwater-training-set"))


def test_lineage_complete_passes_for_registered_datasets_and_a_code_revision():
    result = judge("lineage-complete", passing_evidence())
    assert result.passed
    assert "7a41d09" in result.summary


def test_lineage_complete_fails_naming_the_recalled_upstream_dataset():
    result = judge("lineage-complete", passing_evidence(recalled_upstream=(TELEMETRY_RECALL,)))
    assert not result.passed
    assert result.summary.startswith("dataset brackwater-telemetry-extract was recalled "
                                     "(sensor calibration fault")
    assert "brackwater-telemetry-extract -> brackwater-training-set" in result.summary


def test_lineage_complete_fails_without_a_code_revision():
    for revision in (None, "  "):
        result = judge("lineage-complete", passing_evidence(code_revision=revision))
        assert not result.passed
        assert "no code revision" in result.summary


def test_lineage_complete_fails_for_an_unregistered_dataset():
    evidence = passing_evidence()
    unregistered = dataclasses.replace(evidence.datasets[1], registered=False)
    result = judge("lineage-complete", dataclasses.replace(
        evidence, datasets=(evidence.datasets[0], unregistered)))
    assert not result.passed
    assert result.summary == ("evaluation dataset brackwater-evaluation-set is not registered "
                              "in the catalogue")


def test_lineage_complete_fails_without_an_evaluation_dataset():
    evidence = passing_evidence()
    result = judge("lineage-complete", dataclasses.replace(evidence,
                                                           datasets=evidence.datasets[:1]))
    assert not result.passed
    assert result.summary == "the version names no evaluation dataset"


def test_failed_lineage_complete_can_be_waived():
    result = judge("lineage-complete", passing_evidence(recalled_upstream=(TELEMETRY_RECALL,)),
                   waivers=waive("lineage-complete", "recall concerns pressure only; not used"))
    assert result.waived and result.cleared
