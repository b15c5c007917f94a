"""Climbing the ladder: the next stage, skips the policy forbids, unknown stages."""

import pytest

from registry.errors import NotFound, UserError
from registry.gates import RETIRED, TransitionError, UnknownStage, default_policy, load_policy


@pytest.fixture
def policy():
    return default_policy()


def test_next_stage_climbs_one_rung_from_the_highest_stage_held(policy):
    assert policy.next_stage([]) == "candidate"
    assert policy.next_stage(["candidate"]) == "shadow"
    assert policy.next_stage(["candidate", "canary"]) == "live"
    assert policy.next_stage(["live"]) is None


def test_next_stage_of_a_retired_version_is_the_bottom_rung(policy):
    assert policy.next_stage([RETIRED]) == "candidate"


def test_climbing_one_rung_skips_nothing(policy):
    assert policy.check_transition(["candidate"], "shadow") == ()
    assert policy.check_transition([], "candidate") == ()


def test_climbing_past_a_skippable_stage_is_allowed_and_reported(policy):
    assert policy.check_transition(["candidate"], "canary") == ("shadow",)


def test_skipping_a_stage_the_policy_forbids_is_a_user_error_naming_the_stage(policy):
    with pytest.raises(TransitionError) as caught:
        policy.check_transition(["candidate"], "live")
    assert isinstance(caught.value, UserError) and caught.value.exit_code == 2
    assert caught.value.place == "stages.canary"
    assert "skip canary" in caught.value.message


def test_entering_a_guarded_stage_from_nowhere_must_climb_from_the_bottom(policy):
    with pytest.raises(TransitionError) as caught:
        policy.check_transition([], "shadow")
    assert caught.value.place == "stages.candidate"


def test_a_policy_may_let_every_stage_be_skipped():
    policy = load_policy("""
        ladder = ["candidate", "shadow", "canary", "live"]
        [stages.shadow]
        skippable = true
        [stages.canary]
        skippable = true
        """, source="relaxed")
    assert policy.check_transition(["candidate"], "live") == ("shadow", "canary")


@pytest.mark.parametrize("to_stage", ["production", "Live", ""])
def test_unknown_target_stage_is_a_user_error(policy, to_stage):
    with pytest.raises(UnknownStage) as caught:
        policy.check_transition(["candidate"], to_stage)
    assert isinstance(caught.value, NotFound) and caught.value.exit_code == 2
    assert "candidate, shadow, canary, live, retired" in caught.value.message


def test_unknown_current_stage_is_a_user_error(policy):
    with pytest.raises(UnknownStage):
        policy.check_transition(["staging"], "live")


def test_gates_for_an_unknown_stage_is_a_user_error(policy):
    with pytest.raises(UnknownStage) as caught:
        policy.gates_for("production")
    assert caught.value.place == "stage production"


def test_entering_a_stage_already_held_is_a_user_error(policy):
    with pytest.raises(TransitionError):
        policy.check_transition(["live"], "live")


def test_going_down_the_ladder_and_retiring_are_always_allowed(policy):
    assert policy.check_transition(["live"], "shadow") == ()
    assert policy.check_transition(["canary"], RETIRED) == ()
    assert policy.check_transition([], RETIRED) == ()


def test_exclusive_stages_are_known_by_name(policy):
    assert policy.is_exclusive("live") and policy.is_exclusive("canary")
    assert not policy.is_exclusive("shadow") and not policy.is_exclusive(RETIRED)
    with pytest.raises(UnknownStage):
        policy.is_exclusive("production")


def test_evaluating_the_gates_of_an_unknown_stage_is_a_user_error(policy):
    from gates_helpers import TOMAS, passing_evidence
    from registry.gates import evaluate

    with pytest.raises(UnknownStage) as caught:
        evaluate(policy, "production", passing_evidence(), (), TOMAS)
    assert caught.value.exit_code == 2
