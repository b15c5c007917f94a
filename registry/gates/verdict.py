"""Running a stage's gates on the evidence, with the actor's waivers, into one gate report."""

from __future__ import annotations

import dataclasses
from collections.abc import Callable, Mapping, Sequence
from typing import Any

from registry.actors import Actor
from registry.errors import UserError
from registry.gates.agreement_gate import shadow_agreement
from registry.gates.approval_gate import approved
from registry.gates.data_gates import fresh_data, lineage_complete, no_leakage
from registry.gates.evidence import Evidence, Waiver
from registry.gates.feature_gate import feature_meaning
from registry.gates.policy import Policy
from registry.gates.regression_gates import no_regression, slice_guard
from registry.gates.report import GateReport, GateResult
from registry.gates.schema_gates import (
    live_data_check,
    output_readable,
    reads_live_feed,
    rollback_safe,
)
from registry.gates.settings import GATES
from registry.suggest import did_you_mean

GateFunction = Callable[[Evidence, Mapping[str, Any], str], GateResult]

GATE_FUNCTIONS: Mapping[str, GateFunction] = {
    "reads-live-feed": reads_live_feed,
    "rollback-safe": rollback_safe,
    "output-readable": output_readable,
    "live-data-check": live_data_check,
    "feature-meaning": feature_meaning,
    "no-regression": no_regression,
    "slice-guard": slice_guard,
    "no-leakage": no_leakage,
    "fresh-data": fresh_data,
    "lineage-complete": lineage_complete,
    "approved": approved,
    "shadow-agreement": shadow_agreement,
}
assert tuple(GATE_FUNCTIONS) == GATES, "every gate in the settings table has a function"

UNWAIVABLE = ("approved",)  # waiving four eyes would leave one pair of eyes


def check_waivers(waivers: Sequence[Waiver], actor: Actor, policy: Policy, stage: str) -> None:
    """Refuse any waiver that cannot be recorded: one not given by the acting user, without a
    reason, for a gate that does not guard the stage, for the approved gate, or a second waiver
    of the same gate. Who may waive at all (an approver, never the version's author) is the
    service's one authorisation rule (registry.service.authorisation), asked before this."""
    guarding = {spec.gate for spec in policy.gates_for(stage)}
    seen: set[str] = set()
    for waiver in waivers:
        place = f"waiver of {waiver.gate}"
        if waiver.gate not in GATES:
            raise UserError(f"unknown gate {waiver.gate!r}{did_you_mean(waiver.gate, GATES)} "
                            f"(the gates are {', '.join(GATES)})", place=place)
        if waiver.gate not in guarding:
            raise UserError(f"gate {waiver.gate} does not guard stage {stage} in this model's "
                            "policy; there is nothing to waive", place=place)
        if waiver.gate in UNWAIVABLE:
            raise UserError("the approved gate cannot be waived; ask an approver to approve "
                            "the version instead", place=place)
        if waiver.approver != actor.name:
            raise UserError(f"a waiver is given by the acting user; {actor.name} cannot record "
                            f"one for {waiver.approver}", place=place)
        if not waiver.reason.strip():
            raise UserError("a waiver needs a reason", place=place)
        if waiver.gate in seen:
            raise UserError("the gate is waived twice", place=place)
        seen.add(waiver.gate)


def evaluate(policy: Policy, stage: str, evidence: Evidence, waivers: Sequence[Waiver] = (),
             actor: Actor | None = None) -> GateReport:
    """Every gate guarding `stage`, judged on `evidence`, in policy order; a failed gate with a
    valid waiver counts as cleared. Invalid waivers are a user error and nothing is judged."""
    waivers = tuple(waivers)
    actor = actor or Actor(name="unknown")
    specs = policy.gates_for(stage)
    check_waivers(waivers, actor, policy, stage)
    offered = {waiver.gate: waiver for waiver in waivers}
    results = []
    for spec in specs:
        result = GATE_FUNCTIONS[spec.gate](evidence, spec.settings, stage)
        waiver = offered.get(spec.gate)
        if waiver is not None:
            if result.passed:
                result = dataclasses.replace(
                    result, waiver=waiver,
                    notes=result.notes + (f"waiver by {waiver.approver} not used: the gate "
                                          "passed",))
            else:
                result = dataclasses.replace(result, waived=True, waiver=waiver)
        results.append(result)
    return GateReport(model=evidence.model, version=evidence.version, stage=stage,
                      passed=all(result.cleared for result in results), results=tuple(results),
                      actor=actor.name, evaluated_at=evidence.evaluated_at, waivers=waivers)
