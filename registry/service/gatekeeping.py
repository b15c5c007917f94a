"""Gathering the evidence the gates judge, from the catalogue, inside the caller's transaction.

The gates themselves are pure (registry.gates); this module is the only place that turns rows,
blobs and the pure results of the schema, feature, dataset and evaluation packages into
`registry.gates.Evidence`.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Sequence
from datetime import datetime

from registry import gates
from registry.gates import GateReport, Policy, Waiver
from registry.service import evidence_sources as sources
from registry.service.actors import Actor
from registry.service.model_policy import policy_of
from registry.store import tables as t
from registry.store.unit_of_work import UnitOfWork, utc_now

__all__ = ["GateReport", "Policy", "Waiver", "is_guarded", "policy_of", "run_gates",
           "run_rollback_gates", "SCHEMA_GATES"]

SCHEMA_GATES = ("reads-live-feed", "rollback-safe", "output-readable", "live-data-check")


def is_guarded(policy: Policy, stage: str) -> bool:
    """A guarded stage has gates; entering it needs the approver role."""
    return bool(policy.gates_for(stage))


def top_holder(uow: UnitOfWork, model: t.Model, policy: Policy) -> t.Version | None:
    holdings = uow.stages.holdings(model.id, policy.top_stage)
    return uow.models.version_by_id(holdings[-1].version_id) if holdings else None


def past_top_holders(uow: UnitOfWork, model: t.Model, policy: Policy,
                     exclude: Sequence[int]) -> list[t.Version]:
    ids = uow.stages.versions_that_entered(model.id, policy.top_stage)
    return [uow.models.version_by_id(i) for i in ids if i not in set(exclude)]


def gather_evidence(uow: UnitOfWork, model: t.Model, candidate: t.Version, stage: str,
                    policy: Policy, *, incumbent: t.Version | None,
                    include_quality: bool = True) -> gates.Evidence:
    """Everything the gates of `stage` may look at for `candidate` against `incumbent`."""
    now = utc_now().isoformat(timespec="microseconds")
    evidence = gates.Evidence(
        model=model.name, version=candidate.number, author=candidate.author or candidate.created_by,
        evaluated_at=now, code_revision=candidate.code_revision or None,
        incumbent_version=incumbent.number if incumbent else None,
        datasets=sources.dataset_records(uow, candidate),
        recalled_upstream=sources.recalled_upstream(uow, candidate),
        approvals=sources.approvals(uow, candidate),
        containment=sources.containment(uow, candidate),
        live_sample=sources.live_sample(uow, model),
        consumer_checks=sources.consumer_checks(uow, model, candidate),
    )
    feed = uow.feeds.of_version(candidate)
    if feed is not None:
        moment = datetime.fromisoformat(now)
        evidence = dataclasses.replace(
            evidence, feed_name=feed.name,
            feed_checks=sources.feed_checks(uow, feed, candidate, moment),
            rollback_feed_checks=(sources.feed_checks(uow, feed, incumbent, moment)
                                  if incumbent is not None and incumbent.id != candidate.id
                                  else ()))
    if incumbent is None or incumbent.id == candidate.id:
        return dataclasses.replace(evidence, incumbent_version=None,
                                   holds_top_stage=policy.top_stage if incumbent else None)
    past = past_top_holders(uow, model, policy, exclude=(incumbent.id, candidate.id))
    evidence = dataclasses.replace(
        evidence,
        feed=sources.schema_check(candidate, incumbent, "input"),
        past_feeds=tuple(sources.schema_check(candidate, holder, "input") for holder in past),
        rollback=sources.schema_check(incumbent, candidate, "input"),
        output=sources.output_check(incumbent, candidate),
        feature_changes=sources.feature_changes(incumbent, candidate),
    )
    evidence = dataclasses.replace(
        evidence, acknowledgements=sources.acknowledgements(uow, candidate, stage,
                                                            evidence.feature_changes))
    if include_quality:
        comparisons, slices = sources.quality_comparisons(uow, candidate, incumbent,
                                                          policy.gates_for(stage))
        evidence = dataclasses.replace(evidence, comparisons=comparisons, slices=slices)
    if any(spec.gate == "shadow-agreement" for spec in policy.gates_for(stage)):
        evidence = dataclasses.replace(
            evidence, agreement=_shadow_agreement(uow, model, candidate, incumbent))
    return evidence


def run_gates(uow: UnitOfWork, model: t.Model, candidate: t.Version, stage: str, actor: Actor,
              waivers: Sequence[Waiver] = (), *, policy: Policy) -> GateReport:
    check_waivers_first(stage, actor, waivers, policy)
    incumbent = top_holder(uow, model, policy)
    evidence = gather_evidence(uow, model, candidate, stage, policy, incumbent=incumbent)
    return gates.evaluate(policy, stage, evidence, waivers, actor)


def check_waivers_first(stage: str, actor: Actor, waivers: Sequence[Waiver],
                        policy: Policy) -> None:
    """Refuse a misspelt or unrecordable waiver before seconds of gathering evidence."""
    gates.check_waivers(waivers, actor, policy, stage)


def run_rollback_gates(uow: UnitOfWork, model: t.Model, restored: t.Version, holder: t.Version,
                       stage: str, actor: Actor, waivers: Sequence[Waiver] = (), *,
                       policy: Policy) -> GateReport:
    """Only the schema gates, re-run with the restored version as candidate against the feed
    the current holder's input schema describes."""
    rule = policy.stage(stage)
    schema_only = dataclasses.replace(
        rule, gates=tuple(spec for spec in rule.gates if spec.gate in SCHEMA_GATES))
    restricted = dataclasses.replace(policy, stages={**policy.stages, stage: schema_only})
    check_waivers_first(stage, actor, waivers, restricted)
    evidence = gather_evidence(uow, model, restored, stage, restricted, incumbent=holder,
                               include_quality=False)
    return gates.evaluate(restricted, stage, evidence, waivers, actor)


def parse_waivers(pairs: Sequence[tuple[str, str]], actor: Actor) -> list[Waiver]:
    """`--waive GATE --reason TEXT` pairs from a shell, as waivers given by the acting user."""
    return [Waiver(gate=gate, approver=actor.name, reason=reason) for gate, reason in pairs]


def _shadow_agreement(uow: UnitOfWork, model: t.Model, candidate: t.Version,
                      incumbent: t.Version):
    """Loaded only when a policy has the gate: it reads compact rows with Arrow and numpy."""
    from registry.service.serving_evidence import shadow_agreement

    return shadow_agreement(uow, model, candidate, incumbent)
