"""Which promotion policy a model line follows: a pure reading of its row, for every use case."""

from __future__ import annotations

import functools

from registry import gates
from registry.after_release.states import DEFAULT_METRIC, ReportSettings
from registry.store import tables as t


def policy_of(model: t.Model) -> gates.Policy:
    """The model's own policy laid over the catalogue-wide default, or the default alone."""
    return _parsed(model.name, model.policy_toml)


@functools.lru_cache(maxsize=256)
def _parsed(name: str, policy_toml: str | None) -> gates.Policy:
    """A policy is a pure function of its text (and the shipped default): parsed once per text,
    not once per use (recording one served batch asks five times)."""
    if policy_toml:
        return gates.load_policy(policy_toml, source=f"policy of {name}",
                                 base=gates.default_policy())
    return gates.default_policy()


def report_settings(model: t.Model, task: str | None, seconds: int) -> ReportSettings:
    """What a report after release judges by: the policy's metric (or the task's usual one),
    margin and confidence, for windows of `seconds`."""
    policy = policy_of(model)
    metric = policy.serving.quality_metric or DEFAULT_METRIC.get(task or "binary", "roc_auc")
    return ReportSettings(seconds, metric, policy.serving.quality_margin,
                          policy.serving.confidence)
