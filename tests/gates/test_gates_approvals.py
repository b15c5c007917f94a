"""Four eyes and waivers: the approved gate, approving one's own version, and every bad waiver."""

import pytest

from gates_helpers import (INES, MARA, PRIYA, TOMAS, judge, one_gate_policy, passing_evidence,
                           waive)
from registry.errors import UserError
from registry.gates import Actor, Approval, Waiver, default_policy, evaluate

AT = "2026-12-01T08:30:00Z"


def approvals(*actors: Actor, stage: str | None = None) -> tuple[Approval, ...]:
    return tuple(Approval(actor.name, tuple(sorted(actor.roles)), at=AT, stage=stage) for actor in actors)


def test_approved_passes_with_an_approval_from_an_approver_other_than_the_author():
    result = judge("approved", passing_evidence(approvals=approvals(TOMAS)))
    assert result.passed
    assert "tomas.lindqvist" in result.summary
    assert result.evidence["counted"] == ["tomas.lindqvist"]


def test_the_authors_own_approval_does_not_count():
    author_as_approver = Actor("ines.okafor", frozenset({"publisher", "approver"}))
    result = judge("approved", passing_evidence(approvals=approvals(author_as_approver)))
    assert not result.passed
    assert result.summary.startswith("0 of 1 approval")
    assert any("the version's author" in note for note in result.notes)


def test_an_approval_without_the_approver_role_does_not_count():
    result = judge("approved", passing_evidence(approvals=approvals(MARA)))
    assert not result.passed
    assert any("not an approver" in note for note in result.notes)


def test_two_approvals_must_come_from_two_people():
    evidence = passing_evidence(approvals=approvals(TOMAS, TOMAS))
    assert not judge("approved", evidence, count=2).passed
    both = passing_evidence(approvals=approvals(TOMAS, PRIYA))
    assert judge("approved", both, count=2).passed


def test_an_approval_for_another_stage_does_not_count():
    for_canary = passing_evidence(approvals=approvals(TOMAS, stage="canary"))
    assert not judge("approved", for_canary).passed
    assert judge("approved", passing_evidence(approvals=approvals(TOMAS, stage="live"))).passed


def test_approved_fails_without_approvals():
    result = judge("approved", passing_evidence(approvals=()))
    assert not result.passed
    assert "for live" in result.summary


# waivers

FAILING = passing_evidence(approvals=(), feed=None)  # reads-live-feed fails: no check given


def attempt(waivers, actor=TOMAS, evidence=FAILING):
    return evaluate(default_policy(), "live", evidence, waivers, actor)


@pytest.mark.parametrize("reason", ["", "   \n"])
def test_waiver_without_a_reason_is_rejected(reason):
    with pytest.raises(UserError) as caught:
        attempt(waive("reads-live-feed", reason=reason))
    assert "needs a reason" in caught.value.message
    assert caught.value.exit_code == 2


def test_waiver_on_behalf_of_someone_else_is_rejected():
    with pytest.raises(UserError, match="given by the acting user"):
        attempt((Waiver("reads-live-feed", "priya.raman", "checked"),), actor=TOMAS)


def test_waiver_of_the_approved_gate_is_rejected():
    with pytest.raises(UserError) as caught:
        attempt(waive("approved"))
    assert caught.value.place == "waiver of approved"


def test_waiver_of_an_unknown_gate_or_one_not_guarding_the_stage_is_rejected():
    with pytest.raises(UserError, match="unknown gate"):
        attempt(waive("no-such-gate"))
    with pytest.raises(UserError, match="does not guard stage candidate"):
        evaluate(default_policy(), "candidate", FAILING, waive("reads-live-feed"), TOMAS)


def test_the_same_gate_waived_twice_is_rejected():
    with pytest.raises(UserError, match="waived twice"):
        attempt(waive("reads-live-feed") + waive("reads-live-feed"))


def test_valid_waiver_is_recorded_and_the_waived_gate_counts_as_passed_with_waiver():
    evidence = passing_evidence(feed=None)
    report = evaluate(one_gate_policy("reads-live-feed"), "live", evidence,
                      waive("reads-live-feed", "feed check run by hand"), TOMAS)
    assert report.passed
    (result,) = report.results
    assert result.status == "waived" and not result.passed and result.waived
    assert report.waivers == (Waiver("reads-live-feed", "tomas.lindqvist",
                                     "feed check run by hand"),)
    assert report.summary()["waived"] == [{"gate": "reads-live-feed",
                                           "approver": "tomas.lindqvist",
                                           "reason": "feed check run by hand"}]


def test_waiver_of_a_gate_that_passed_is_recorded_but_not_used():
    report = evaluate(one_gate_policy("reads-live-feed"), "live", passing_evidence(),
                      waive("reads-live-feed"), TOMAS)
    (result,) = report.results
    assert result.passed and not result.waived
    assert result.waiver is not None
    assert any("not used" in note for note in result.notes)
    assert report.waivers


def test_a_waiver_clears_only_its_own_gate():
    report = attempt(waive("reads-live-feed"))
    assert report.result("reads-live-feed").waived
    assert not report.passed
    assert [r.gate for r in report.failures] == ["live-data-check", "approved"]


def test_the_author_may_run_the_gates_without_waivers():
    report = evaluate(default_policy(), "live", passing_evidence(), (), INES)
    assert report.passed
    assert report.actor == "ines.okafor"
