"""Loading policies: the shipped default, custom and layered policies, and every bad policy."""

from pathlib import Path

import pytest

from registry.errors import UserError
from registry.gates import (GATES, RETIRED, PolicyError, default_policy, default_policy_text,
                            load_policy)

REPO = Path(__file__).resolve().parents[2]


def test_default_policy_has_the_default_ladder_with_live_and_canary_exclusive():
    policy = default_policy()
    assert policy.ladder == ("candidate", "shadow", "canary", "live")
    assert policy.exclusive_stages == ("canary", "live")
    assert set(policy.stages) == {"candidate", "shadow", "canary", "live", RETIRED}
    assert policy.top_stage == "live"


def test_default_policy_guards_live_with_every_gate_and_leaves_candidate_and_retired_open():
    policy = default_policy()
    assert {spec.gate for spec in policy.gates_for("live")} == set(GATES)
    assert policy.gates_for("candidate") == ()
    assert policy.gates_for(RETIRED) == ()


def test_default_policy_completes_every_setting_from_the_defaults():
    settings = {spec.gate: spec.settings for spec in default_policy().gates_for("live")}
    assert settings["reads-live-feed"] == {"include_past_feeds": False}
    assert settings["no-regression"] == {"metric": "roc_auc", "margin": 0.01, "confidence": 0.95}
    assert settings["slice-guard"]["slice_margins"] == {}
    assert settings["approved"] == {"count": 1}


def test_default_policy_text_is_the_shipped_file_and_the_documented_example_loads():
    shipped = REPO / "registry" / "gates" / "default_policy.toml"
    assert default_policy_text() == shipped.read_text("utf-8")
    document = (REPO / "docs" / "policy.md").read_text("utf-8")
    example = document.split("```toml\n", 1)[1].split("```", 1)[0]
    policy = load_policy(example, source="docs/policy.md", base=default_policy())
    live = {spec.gate: spec.settings for spec in policy.gates_for("live")}
    assert "slice-guard" not in live and live["approved"] == {"count": 2}
    assert live["no-regression"]["metric"] == "rmse"
    assert "slice-guard" not in {spec.gate for spec in policy.gates_for("canary")}


def test_custom_policy_defines_its_own_ladder_gates_and_settings():
    policy = load_policy(
        """
        ladder = ["candidate", "trial", "live"]
        [stages.trial]
        skippable = true
        [stages.trial.gates]
        reads-live-feed = { include_past_feeds = true }
        [stages.live]
        exclusive = true
        [stages.live.gates.no-regression]
        metric = "rmse"
        margin = 5
        [stages.live.gates.slice-guard.slice_margins]
        OLD_TOWN = 0.05
        """, source="night-flow-leak")
    assert policy.ladder == ("candidate", "trial", "live")
    assert policy.exclusive_stages == ("live",)
    assert policy.stage("trial").is_skippable
    (feed,) = policy.gates_for("trial")
    assert feed.settings == {"include_past_feeds": True}
    regression, slices = policy.gates_for("live")
    assert regression.settings == {"metric": "rmse", "margin": 5.0, "confidence": 0.95}
    assert slices.settings["slice_margins"] == {"OLD_TOWN": 0.05}


def test_model_policy_laid_over_the_default_changes_only_what_it_names():
    policy = load_policy(
        """
        [stages.live.gates]
        slice-guard = false
        [stages.live.gates.no-regression]
        metric = "rmse"
        margin = 2.5
        [stages.live.gates.approved]
        count = 2
        """, source="night-flow-leak", base=default_policy())
    live = {spec.gate: spec.settings for spec in policy.gates_for("live")}
    assert "slice-guard" not in live
    assert live["no-regression"] == {"metric": "rmse", "margin": 2.5, "confidence": 0.95}
    assert live["approved"] == {"count": 2}
    assert "slice-guard" in {spec.gate for spec in policy.gates_for("canary")}
    assert policy.ladder == default_policy().ladder


def test_a_new_ladder_over_the_default_drops_the_stages_it_leaves_out():
    policy = load_policy('ladder = ["candidate", "live"]', source="m", base=default_policy())
    assert set(policy.stages) == {"candidate", "live", RETIRED}
    assert policy.gates_for("live") == default_policy().gates_for("live")


def test_gate_set_to_true_takes_the_default_settings():
    policy = load_policy('ladder = ["live"]\n[stages.live.gates]\nfresh-data = true',
                         source="m")
    assert policy.gates_for("live")[0].settings == {"max_age_days": 365}


def test_policy_to_dict_reloads_to_the_same_policy():
    policy = default_policy()
    again = load_policy("", source="default again", base=policy)
    assert again.to_dict() == policy.to_dict()
    assert again.stages == policy.stages


BAD_POLICIES = [
    ("unknown gate", '[stages.live.gates.no-regresion]\nmargin = 0.1',
     "stages.live.gates.no-regresion", "unknown gate"),
    ("unknown setting", '[stages.live.gates.no-regression]\nmargn = 0.1',
     "stages.live.gates.no-regression.margn", "unknown setting"),
    ("setting of a gate without settings", '[stages.live.gates.rollback-safe]\nstrict = true',
     "stages.live.gates.rollback-safe.strict", "no settings"),
    ("margin of the wrong type", '[stages.live.gates.no-regression]\nmargin = "small"',
     "stages.live.gates.no-regression.margin", "must be a number"),
    ("negative margin", '[stages.live.gates.no-regression]\nmargin = -0.1',
     "stages.live.gates.no-regression.margin", "at least 0"),
    ("confidence of one or more", '[stages.live.gates.no-regression]\nconfidence = 1.5',
     "stages.live.gates.no-regression.confidence", "strictly between 0 and 1"),
    ("unknown metric", '[stages.live.gates.no-regression]\nmetric = "auc"',
     "stages.live.gates.no-regression.metric", "must be one of"),
    ("no approvals", '[stages.live.gates.approved]\ncount = 0',
     "stages.live.gates.approved.count", "at least 1"),
    ("fractional count", '[stages.live.gates.approved]\ncount = 1.5',
     "stages.live.gates.approved.count", "whole number"),
    ("boolean count", '[stages.live.gates.approved]\ncount = true',
     "stages.live.gates.approved.count", "whole number"),
    ("containment above one", '[stages.live.gates.no-leakage]\nmax_containment = 2',
     "stages.live.gates.no-leakage.max_containment", "between 0 and 1"),
    ("flag as a string", '[stages.live.gates.reads-live-feed]\ninclude_past_feeds = "yes"',
     "stages.live.gates.reads-live-feed.include_past_feeds", "true or false"),
    ("negative slice margin", '[stages.live.gates.slice-guard.slice_margins]\nOLD_TOWN = -1',
     "stages.live.gates.slice-guard.slice_margins", "at least 0"),
    ("gate as a number", '[stages.live.gates]\napproved = 3',
     "stages.live.gates.approved", "table of settings"),
    ("unknown stage", '[stages.production]\nexclusive = true',
     "stages.production", "unknown stage"),
    ("unknown stage key", '[stages.live]\nexclusiv = true',
     "stages.live.exclusiv", "unknown key"),
    ("exclusive as a string", '[stages.live]\nexclusive = "yes"',
     "stages.live.exclusive", "true or false"),
    ("retired stage made skippable", '[stages.retired]\nskippable = true',
     "stages.retired.skippable", "unknown key"),
    ("unknown top-level key", 'ladders = ["candidate"]', "ladders", "unknown key"),
]


@pytest.mark.parametrize("text,place,words", [case[1:] for case in BAD_POLICIES],
                         ids=[case[0] for case in BAD_POLICIES])
def test_bad_policy_laid_over_the_default_is_a_user_error_naming_the_place(text, place, words):
    with pytest.raises(PolicyError) as caught:
        load_policy(text, source="models/main-burst-risk.toml", base=default_policy())
    error = caught.value
    assert isinstance(error, UserError) and error.exit_code == 2
    assert error.place == place
    assert words in error.message
    assert error.one_line().startswith(f"{place}: ")
    assert "models/main-burst-risk.toml" in error.one_line()


BAD_LADDERS = [
    ("duplicate stage", 'ladder = ["candidate", "live", "live"]', "ladder[2]", "duplicate stage"),
    ("retired on the ladder", 'ladder = ["candidate", "retired"]', "ladder[1]", "outside"),
    ("stage name in capitals", 'ladder = ["candidate", "Live"]', "ladder[1]", "lower-case"),
    ("empty ladder", "ladder = []", "ladder", "non-empty"),
    ("no ladder", "[stages.live]", "ladder", "non-empty"),
    ("stage table off the ladder", 'ladder = ["live"]\n[stages.canary]', "stages.canary",
     "unknown stage"),
]


@pytest.mark.parametrize("text,place,words", [case[1:] for case in BAD_LADDERS],
                         ids=[case[0] for case in BAD_LADDERS])
def test_bad_ladder_is_a_user_error_naming_the_place(text, place, words):
    with pytest.raises(PolicyError) as caught:
        load_policy(text, source="p.toml")
    assert caught.value.place == place
    assert words in caught.value.message


@pytest.mark.parametrize("text", ['ladder = ["candidate"]\nmargin = = 1',
                                  'ladder = ["live"]\n[stages.live]\n[stages.live]'],
                         ids=["broken value", "stage table declared twice"])
def test_policy_that_is_not_toml_is_a_user_error_with_the_line(text):
    with pytest.raises(PolicyError) as caught:
        load_policy(text, source="broken.toml")
    assert "not valid TOML" in caught.value.message
    assert "line" in caught.value.message
    assert caught.value.exit_code == 2
