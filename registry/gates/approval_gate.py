"""Four eyes: the approved gate counts approvals by approvers other than the author."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from registry.gates.evidence import APPROVER, Evidence
from registry.gates.report import GateResult
from registry.plain import to_plain


def approved(evidence: Evidence, settings: Mapping[str, Any], stage: str) -> GateResult:
    """At least `count` approvals for this stage from distinct approvers other than the author."""
    gate = "approved"
    needed = settings["count"]
    counted: list[str] = []
    ignored: list[str] = []
    for approval in evidence.approvals:
        if approval.stage is not None and approval.stage != stage:
            continue  # an approval for another stage
        if approval.user == evidence.author:
            ignored.append(f"approval by {approval.user} ignored: the version's author")
        elif APPROVER not in approval.roles:
            ignored.append(f"approval by {approval.user} ignored: not an {APPROVER}")
        elif approval.user not in counted:
            counted.append(approval.user)
    facts = {"needed": needed, "counted": counted, "author": evidence.author,
             "approvals": to_plain(evidence.approvals)}
    who = f" ({', '.join(counted)})" if counted else ""
    line = (f"{len(counted)} of {needed} approval{'s' if needed > 1 else ''} from approvers "
            f"other than the author {evidence.author}{who}")
    if len(counted) < needed:
        return GateResult(gate, False, False, f"{line} for {stage}", facts, tuple(ignored))
    return GateResult(gate, True, False, line, facts, tuple(ignored))
