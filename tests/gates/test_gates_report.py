"""The gate report: JSON round trip, audit summary, plain text, refusal."""

import json

import pytest

from gates_helpers import TOMAS, passing_evidence, waive
from registry.errors import Refusal
from registry.gates import (FeatureChange, GateReport, default_policy, evaluate, render_report)

UNIT_CHANGED = FeatureChange("mean_pressure_psi", "unit-changed", "breaking",
                             "unit changed from kPa to [psi]")


@pytest.fixture
def report() -> GateReport:
    evidence = passing_evidence(version=3, feature_changes=(UNIT_CHANGED,), approvals=(),
                                containment=())
    return evaluate(default_policy(), "live", evidence, waive("no-leakage", "disjoint by "
                                                              "construction"), TOMAS)


def test_report_round_trips_through_json(report):
    document = json.loads(json.dumps(report.to_dict()))
    assert GateReport.from_dict(document) == report


def test_report_document_names_each_gate_with_its_status(report):
    document = report.to_dict()
    assert document["passed"] is False
    assert document["stage"] == "live" and document["version"] == 3
    statuses = {r["gate"]: r["status"] for r in document["results"]}
    assert statuses["feature-meaning"] == "failed"
    assert statuses["no-leakage"] == "waived"
    assert statuses["reads-live-feed"] == "passed"


def test_summary_for_the_audit_log_lists_failed_gates_and_waivers(report):
    summary = report.summary()
    json.dumps(summary)
    assert set(summary["failed"]) == {"feature-meaning", "approved"}
    assert summary["failed"]["feature-meaning"].startswith("mean_pressure_psi: ")
    assert summary["waived"] == [{"gate": "no-leakage", "approver": "tomas.lindqvist",
                                  "reason": "disjoint by construction"}]
    assert len(summary["gates"]) == 12


def test_plain_text_shows_the_verdict_every_gate_and_the_waiver(report):
    text = render_report(report)
    first, *lines = text.splitlines()
    # a waived gate is counted as waived, never as passed
    assert first == ("main-burst-risk v3 -> live: refused "
                     "(9 passed, 1 waived, 2 failed of 12 gates)")
    assert any(line.split()[:2] == ["failed", "feature-meaning"] and "mean_pressure_psi" in line
               for line in lines)
    assert any(line.split()[:2] == ["waived", "no-leakage"] for line in lines)
    assert any("waived by tomas.lindqvist: disjoint by construction" in line for line in lines)


def test_plain_text_of_a_stage_without_gates_says_so():
    report = evaluate(default_policy(), "candidate", passing_evidence(), (), TOMAS)
    assert report.passed
    assert "no gate guards this stage" in render_report(report)


def test_refusal_names_every_failed_gate_and_its_place(report):
    refusal = report.refusal()
    assert isinstance(refusal, Refusal) and refusal.exit_code == 1
    assert refusal.place == "feature-meaning"
    assert "feature-meaning: mean_pressure_psi: unit changed" in refusal.message
    assert "approved: 0 of 1 approval" in refusal.message


def test_malformed_report_document_is_a_user_error():
    with pytest.raises(Exception) as caught:
        GateReport.from_dict({"model": "main-burst-risk"})
    assert getattr(caught.value, "exit_code", None) == 2
