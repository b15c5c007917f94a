"""The feature-meaning gate: no feature silently changed meaning between incumbent and candidate."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from registry.gates.evidence import APPROVER, Evidence
from registry.gates.report import GateResult
from registry.gates.schema_gates import no_incumbent
from registry.plain import to_plain


def feature_meaning(evidence: Evidence, settings: Mapping[str, Any], stage: str) -> GateResult:
    """Fail on any breaking change in the semantic feature diff; a needs-review change needs an
    acknowledgement from an approver other than the author (when the policy asks for one)."""
    gate = "feature-meaning"
    if not evidence.has_incumbent:
        return no_incumbent(gate, evidence)
    notes = []
    acknowledged: dict[str, list[str]] = {}
    for ack in evidence.acknowledgements:
        if ack.user == evidence.author:
            notes.append(f"acknowledgement of {ack.field} by {ack.user} ignored: the author "
                         "cannot acknowledge their own change")
        elif APPROVER not in ack.roles:
            notes.append(f"acknowledgement of {ack.field} by {ack.user} ignored: "
                         f"{ack.user} does not hold the {APPROVER} role")
        else:
            acknowledged.setdefault(ack.field, []).append(ack.user)

    changes = []
    breaking, unacknowledged = [], []
    for change in evidence.feature_changes:
        entry = to_plain(change)
        if change.classification == "needs-review":
            entry["acknowledged_by"] = acknowledged.get(change.field, [])
            if settings["require_acknowledgement"] and not entry["acknowledged_by"]:
                unacknowledged.append(change)
        elif change.classification == "breaking":
            breaking.append(change)
        changes.append(entry)
    facts = {"changes": changes}

    if breaking:
        first = breaking[0]
        more = len(breaking) - 1
        tail = f" (and {more} more breaking change{'s' if more > 1 else ''})" if more else ""
        notes += [f"{change.field}: {change.message}" for change in breaking[1:]]
        notes += [f"{change.field}: needs an approver's acknowledgement: {change.message}"
                  for change in unacknowledged]
        return GateResult(gate, False, False,
                          f"{first.field}: {first.message} ({first.kind}, breaking){tail}",
                          facts, tuple(notes))
    if unacknowledged:
        first = unacknowledged[0]
        notes += [f"{change.field}: needs an approver's acknowledgement: {change.message}"
                  for change in unacknowledged[1:]]
        return GateResult(gate, False, False,
                          f"{first.field}: {first.message} ({first.kind}) needs an approver's "
                          "acknowledgement", facts, tuple(notes))
    reviewed = sum(change.classification == "needs-review" for change in evidence.feature_changes)
    if not evidence.feature_changes:
        summary = f"no feature changed meaning since version {evidence.incumbent_version}"
    else:
        count = len(evidence.feature_changes)
        summary = (f"{count} feature change{'s' if count > 1 else ''} since version "
                   f"{evidence.incumbent_version}, none breaking")
        if reviewed:
            summary += f"; {reviewed} needing review" + (
                ", acknowledged" if settings["require_acknowledgement"] else "")
    return GateResult(gate, True, False, summary, facts, tuple(notes))
