"""The data gates: no leakage of evaluation records into training, fresh training data, and a
complete lineage with nothing upstream recalled."""

from __future__ import annotations

from collections.abc import Mapping
from datetime import UTC
from typing import Any

from registry.gates.evidence import Evidence, parse_time
from registry.gates.report import GateResult
from registry.plain import to_plain


def no_leakage(evidence: Evidence, settings: Mapping[str, Any], stage: str) -> GateResult:
    """The share of evaluation feature-only hashes found in training stays within the limit."""
    gate = "no-leakage"
    limit, with_bound = settings["max_containment"], settings["include_error_bound"]
    if not evidence.containment:
        return GateResult(gate, False, False, "no overlap estimate between the training and "
                          "evaluation datasets was supplied; the gate cannot pass without it")
    findings, failures, notes = [], [], []
    for estimate in evidence.containment:
        judged = estimate.containment + (estimate.error_bound if with_bound else 0.0)
        pair = f"{estimate.evaluation_dataset} in {estimate.training_dataset}"
        shown = (f"containment of {pair} is {estimate.containment:.4f} "
                 f"(± {estimate.error_bound:.4f}, {estimate.method})")
        leaks = judged > limit
        findings.append({**to_plain(estimate), "judged": judged, "limit": limit,
                         "verdict": "leaks" if leaks else "within-limit"})
        if leaks:
            failures.append(f"{shown}, above the limit {limit:g}")
        elif abs(estimate.containment - limit) <= estimate.error_bound:
            notes.append(f"{shown}: the limit {limit:g} lies within the estimate's error bound")
    facts = {"max_containment": limit, "include_error_bound": with_bound, "estimates": findings}
    if failures:
        return GateResult(gate, False, False, failures[0], facts, tuple(failures[1:] + notes))
    worst = max(evidence.containment, key=lambda e: e.containment)
    return GateResult(gate, True, False,
                      f"largest containment {worst.containment:.4f} "
                      f"({worst.evaluation_dataset} in {worst.training_dataset}) is within "
                      f"{limit:g}", facts, tuple(notes))


def fresh_data(evidence: Evidence, settings: Mapping[str, Any], stage: str) -> GateResult:
    """No training dataset older than the limit at the time of the attempt (its newest record's
    time when known, else its registration time)."""
    gate = "fresh-data"
    limit = settings["max_age_days"]
    now = parse_time(evidence.evaluated_at, place="evaluated_at")
    training = [d for d in evidence.datasets if d.role == "training"]
    if not training:
        return GateResult(gate, False, False, "the version names no training dataset",
                          {"max_age_days": limit})
    findings: list[dict[str, Any]] = []
    failures: list[str] = []
    for dataset in training:
        stamp = dataset.data_as_of or dataset.registered_at
        if stamp is None:
            findings.append({"dataset": dataset.name, "as_of": None, "age_days": None})
            failures.append(f"dataset {dataset.name}: its age is unknown (not registered)")
            continue
        # A stamp a moment after the attempt (clocks of two writers) counts as age 0.
        age = max(0.0, (now - parse_time(stamp, place=f"dataset {dataset.name}")).total_seconds()
                  / 86400)
        basis = "newest record" if dataset.data_as_of else "registered"
        findings.append({"dataset": dataset.name, "as_of": stamp, "basis": basis,
                         "age_days": round(age, 3)})
        if age > limit:
            failures.append(f"dataset {dataset.name} is {age:.0f} days old ({basis} {stamp}), "
                            f"older than the limit of {limit} days")
    facts = {"max_age_days": limit, "evaluated_at": evidence.evaluated_at, "datasets": findings}
    if failures:
        return GateResult(gate, False, False, failures[0], facts, tuple(failures[1:]))
    oldest = max(findings, key=lambda f: f["age_days"])
    return GateResult(gate, True, False,
                      f"oldest training dataset {oldest['dataset']} is {oldest['age_days']:.0f} "
                      f"days old, within {limit} days", facts)


def lineage_complete(evidence: Evidence, settings: Mapping[str, Any], stage: str) -> GateResult:
    """Training and evaluation datasets registered, a code revision present, nothing upstream
    recalled."""
    gate = "lineage-complete"
    problems = []
    for dataset in evidence.datasets:
        if not dataset.registered:
            problems.append(f"{dataset.role} dataset {dataset.name} is not registered in the "
                            "catalogue")
    for role in ("training", "evaluation"):
        if not any(d.role == role for d in evidence.datasets):
            problems.append(f"the version names no {role} dataset")
    if not (evidence.code_revision or "").strip():
        problems.append("the version records no code revision")
    for recall in evidence.recalled_upstream:
        chain = " -> ".join(recall.via) if recall.via else recall.name
        problems.append(f"dataset {recall.name} was recalled ({recall.reason}, "
                        f"{_to_the_second(recall.recalled_at)}); it is upstream via {chain}")
    facts = {"code_revision": evidence.code_revision,
             "datasets": to_plain(evidence.datasets),
             "recalled_upstream": to_plain(evidence.recalled_upstream),
             "problems": problems}
    if problems:
        return GateResult(gate, False, False, problems[0], facts, tuple(problems[1:]))
    names = ", ".join(d.name for d in evidence.datasets)
    return GateResult(gate, True, False,
                      f"code revision {evidence.code_revision}; datasets {names} registered; "
                      "nothing upstream recalled", facts)


def _to_the_second(iso_time: str) -> str:
    """`2026-12-04 15:30:03Z`: a stored time as people read it, in UTC with its offset."""
    moment = parse_time(iso_time, place="recalled_at").astimezone(UTC)
    return moment.strftime("%Y-%m-%d %H:%M:%SZ")
