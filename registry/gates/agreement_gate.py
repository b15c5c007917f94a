"""The shadow-agreement gate: before a candidate takes traffic, it must have scored enough of
the live rows beside the incumbent and agreed with it on enough of them."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from registry.gates.evidence import Evidence
from registry.gates.report import GateResult
from registry.plain import to_plain

GATE = "shadow-agreement"


def shadow_agreement(evidence: Evidence, settings: Mapping[str, Any], stage: str) -> GateResult:
    """At least `min_rows` row ids scored by both, agreeing on at least `min_agreement`."""
    min_rows, min_share = settings["min_rows"], settings["min_agreement"]
    facts: dict[str, Any] = {"min_rows": min_rows, "min_agreement": min_share,
                             "agreement": to_plain(evidence.agreement)}
    if not evidence.has_incumbent:
        return GateResult(GATE, True, False, "no version holds the top stage yet; there is "
                          "nothing to agree with", facts)
    found = evidence.agreement
    incumbent = f"v{evidence.incumbent_version}"
    if found is None or found.rows == 0:
        return GateResult(GATE, False, False, f"v{evidence.version} scored no live row beside "
                          f"{incumbent}; serve it in shadow and send the served batches back "
                          "first", facts)
    if found.rows < min_rows:
        return GateResult(GATE, False, False, f"{found.rows} live rows scored by both "
                          f"v{evidence.version} and {incumbent}, fewer than {min_rows}", facts)
    if found.share_agreeing is None:
        return GateResult(GATE, True, False,
                          f"{found.rows} live rows scored by both; mean absolute difference "
                          f"{found.mean_absolute_difference:.4g} (a regression has no share "
                          "agreeing to judge)", facts)
    line = (f"v{evidence.version} agrees with {incumbent} on {found.share_agreeing:.1%} of "
            f"{found.rows} shared live rows")
    if found.share_agreeing < min_share:
        return GateResult(GATE, False, False, f"{line}, below {min_share:.1%}", facts)
    return GateResult(GATE, True, False, f"{line} (at least {min_share:.1%})", facts)
