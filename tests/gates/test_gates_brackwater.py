"""The Brackwater story (SCENARIO.md) as hand-made evidence under the default policy."""

import dataclasses

from gates_helpers import (DISTRICTS, TOMAS, Approval, district_slice, passing_evidence,
                           without_incumbent)
from registry.gates import (FeatureChange, RecalledDataset, SchemaCheck, SchemaProblem,
                            Waiver, default_policy, evaluate, render_report)

POLICY = default_policy()
APPROVED_BY_TOMAS = (Approval("tomas.lindqvist", ("approver",), at="2026-12-01T08:30:00Z"),)


def v1() -> dict:
    return dict(version=1, code_revision="3f9c2e1", approvals=APPROVED_BY_TOMAS)


def v2_against_v1(**changes):
    slices = tuple(district_slice(v) for v in DISTRICTS if v != "OLD_TOWN") + (
        district_slice("OLD_TOWN", difference=-0.045, p_value=0.002),)
    return passing_evidence(
        feature_changes=(FeatureChange("repairs_5y", "field-added", "safe",
                                       "new feature repairs_5y with default 0"),),
        slices=slices, **changes)


def v3_against_v2():
    return passing_evidence(
        version=3, incumbent_version=2, code_revision="c81be77",
        feed=SchemaCheck(3, 2, True, notes=(
            "reader field mean_pressure_psi reads writer field mean_pressure_kpa through its "
            "alias",)),
        past_feeds=(SchemaCheck(3, 2, True), SchemaCheck(3, 1, True)),
        rollback=SchemaCheck(2, 3, True), output=SchemaCheck(2, 3, True),
        feature_changes=(
            FeatureChange("mean_pressure_psi", "renamed", "needs-review",
                          "renamed from mean_pressure_kpa (alias kept)"),
            FeatureChange("mean_pressure_psi", "unit-changed", "breaking",
                          "unit changed from kPa to [psi]; same values now mean other "
                          "pressures"),
        ))


def v4_against_v2():
    type_change = SchemaProblem("/fields/diameter_mm/type", "type-mismatch",
                                "reader type string cannot read writer type int; int promotes "
                                "only to long, float and double")
    return passing_evidence(
        version=4, incumbent_version=2, code_revision="e02f5a3",
        feed=SchemaCheck(4, 2, False, problems=(type_change,)),
        rollback=SchemaCheck(2, 4, False, problems=(dataclasses.replace(
            type_change, message="reader type int cannot read writer type string"),)),
        output=SchemaCheck(2, 4, True))


def test_v1_climbs_to_live_with_nothing_to_compare_against():
    evidence = without_incumbent(passing_evidence(**v1()))
    for stage in ("shadow", "canary", "live"):
        report = evaluate(POLICY, stage, evidence, (), TOMAS)
        assert report.passed, render_report(report)
    notes = [note for result in report.results for note in result.notes]
    assert any("nothing to compare against" in note for note in notes)


def test_v2_climbs_to_live_once_an_approver_waives_the_slice_finding():
    shadow = evaluate(POLICY, "shadow", v2_against_v1(), (), TOMAS)
    assert shadow.passed, render_report(shadow)
    refused = evaluate(POLICY, "canary", v2_against_v1(), (), TOMAS)
    assert [r.gate for r in refused.failures] == ["slice-guard"]
    assert refused.result("slice-guard").summary.startswith("slice district=OLD_TOWN: ")
    waiver = Waiver("slice-guard", "tomas.lindqvist",
                    "OLD_TOWN mains relined in 2026; the evaluation set predates it")
    for stage in ("canary", "live"):
        allowed = evaluate(POLICY, stage, v2_against_v1(), (waiver,), TOMAS)
        assert allowed.passed, render_report(allowed)
        assert allowed.result("slice-guard").status == "waived"
        assert allowed.result("no-regression").passed
        assert allowed.result("rollback-safe").passed
    assert allowed.result("approved").passed


def test_v3_is_stopped_by_the_feature_gate_naming_mean_pressure_psi():
    report = evaluate(POLICY, "shadow", v3_against_v2(), (), TOMAS)
    assert not report.passed
    assert [r.gate for r in report.failures] == ["feature-meaning"]
    result = report.result("feature-meaning")
    assert result.summary.startswith("mean_pressure_psi: unit changed from kPa to [psi]")
    assert report.result("reads-live-feed").passed  # schema-readable through the alias
    assert any("alias" in note for note in report.result("reads-live-feed").notes)


def test_v4_is_refused_by_the_schema_gate_naming_diameter_mm():
    report = evaluate(POLICY, "shadow", v4_against_v2(), (), TOMAS)
    assert not report.passed
    assert [r.gate for r in report.failures] == ["reads-live-feed"]
    assert report.result("reads-live-feed").summary.startswith("/fields/diameter_mm/type: ")
    canary = evaluate(POLICY, "canary", v4_against_v2(), (), TOMAS)
    assert {r.gate for r in canary.failures} == {"reads-live-feed", "rollback-safe",
                                                 "live-data-check"}
    assert "/fields/diameter_mm/type" in canary.refusal().message


def test_after_the_telemetry_recall_v2_is_blocked_by_lineage():
    recall = RecalledDataset("brackwater-telemetry-extract", "sensor calibration fault",
                             "2026-11-28T14:00:00Z",
                             via=("brackwater-telemetry-extract", "brackwater-training-set"))
    report = evaluate(POLICY, "shadow", v2_against_v1(recalled_upstream=(recall,)), (), TOMAS)
    assert [r.gate for r in report.failures] == ["lineage-complete"]
    assert "brackwater-telemetry-extract" in report.result("lineage-complete").summary
