"""Gate results and the gate report of one attempt: as JSON, as an audit summary, as text."""

from __future__ import annotations

import dataclasses
from collections.abc import Mapping
from typing import Any

from registry.errors import Refusal, Unprocessable
from registry.gates.evidence import Waiver


@dataclasses.dataclass(frozen=True)
class GateResult:
    """The verdict of one gate.

    passed: what the check itself found; waived: a failed gate an approver overrode (it then
    counts as cleared); summary: one line naming the place at fault (a schema path, a feature, a
    metric, a slice) or what was confirmed; evidence: the JSON-ready facts it judged; notes:
    remarks that do not change the verdict; waiver: the waiver given for this gate, if any.
    """

    gate: str
    passed: bool
    waived: bool
    summary: str
    evidence: Mapping[str, Any] = dataclasses.field(default_factory=dict)
    notes: tuple[str, ...] = ()
    waiver: Waiver | None = None

    @property
    def cleared(self) -> bool:
        """Passed, or failed and waived."""
        return self.passed or self.waived

    @property
    def status(self) -> str:
        return "passed" if self.passed else "waived" if self.waived else "failed"

    def to_dict(self) -> dict[str, Any]:
        return {
            "gate": self.gate,
            "status": self.status,
            "passed": self.passed,
            "waived": self.waived,
            "summary": self.summary,
            "evidence": dict(self.evidence),
            "notes": list(self.notes),
            "waiver": dataclasses.asdict(self.waiver) if self.waiver else None,
        }

    @classmethod
    def from_dict(cls, document: Mapping[str, Any]) -> GateResult:
        waiver = document.get("waiver")
        return cls(gate=document["gate"], passed=bool(document["passed"]),
                   waived=bool(document["waived"]), summary=document["summary"],
                   evidence=dict(document.get("evidence", {})),
                   notes=tuple(document.get("notes", ())),
                   waiver=Waiver(**waiver) if waiver else None)


@dataclasses.dataclass(frozen=True)
class GateReport:
    """Every gate's verdict for one attempt to move `model` `version` into `stage`.

    passed: every gate cleared (passed, or failed and waived). actor: who attempted it;
    evaluated_at: when (from the evidence); waivers: every waiver offered, used or not.
    """

    model: str
    version: int
    stage: str
    passed: bool
    results: tuple[GateResult, ...]
    actor: str
    evaluated_at: str
    waivers: tuple[Waiver, ...] = ()

    @property
    def failures(self) -> tuple[GateResult, ...]:
        """The gates that failed and were not waived."""
        return tuple(result for result in self.results if not result.cleared)

    def result(self, gate: str) -> GateResult:
        for result in self.results:
            if result.gate == gate:
                return result
        raise KeyError(gate)

    def to_dict(self) -> dict[str, Any]:
        return {
            "model": self.model,
            "version": self.version,
            "stage": self.stage,
            "passed": self.passed,
            "actor": self.actor,
            "evaluated_at": self.evaluated_at,
            "results": [result.to_dict() for result in self.results],
            "waivers": [dataclasses.asdict(waiver) for waiver in self.waivers],
        }

    @classmethod
    def from_dict(cls, document: Mapping[str, Any]) -> GateReport:
        try:
            return cls(model=document["model"], version=int(document["version"]),
                       stage=document["stage"], passed=bool(document["passed"]),
                       results=tuple(GateResult.from_dict(r) for r in document["results"]),
                       actor=document["actor"], evaluated_at=document["evaluated_at"],
                       waivers=tuple(Waiver(**w) for w in document.get("waivers", ())))
        except (KeyError, TypeError) as error:
            raise Unprocessable(f"not a gate report: missing or malformed {error}",
                                place="gate report") from None

    def summary(self) -> dict[str, Any]:
        """The short form for the audit log: the verdict, each gate's status, the waivers."""
        return {
            "model": self.model,
            "version": self.version,
            "stage": self.stage,
            "passed": self.passed,
            "gates": {result.gate: result.status for result in self.results},
            "failed": {result.gate: result.summary for result in self.failures},
            "waived": [dataclasses.asdict(result.waiver) for result in self.results
                       if result.waived and result.waiver],
        }

    def refusal(self) -> Refusal:
        """The refusal to raise when the report did not pass: every failed gate and its place."""
        failed = self.failures
        lines = "; ".join(f"{result.gate}: {result.summary}" for result in failed)
        return Refusal(f"{self.model} v{self.version} may not enter {self.stage}: {lines}",
                       place=failed[0].gate if failed else None)


def count_line(report: GateReport) -> str:
    """"8 passed, 1 waived, 1 failed of 10 gates": a waived gate is never counted as passed."""
    counts = {status: sum(r.status == status for r in report.results)
              for status in ("passed", "waived", "failed")}
    shown = [f"{counts['passed']} passed"] + [f"{n} {status}" for status, n in counts.items()
                                              if n and status != "passed"]
    plural = "s" if len(report.results) != 1 else ""
    return f"{', '.join(shown)} of {len(report.results)} gate{plural}"


def render_report(report: GateReport) -> str:
    """The report as plain text for the command line, one gate a line, notes indented below."""
    verdict = "allowed" if report.passed else "refused"
    lines = [f"{report.model} v{report.version} -> {report.stage}: {verdict} "
             f"({count_line(report)})"]
    if not report.results:
        lines.append("  no gate guards this stage")
    width = max((len(result.gate) for result in report.results), default=0)
    for result in report.results:
        lines.append(f"  {result.status:<7} {result.gate:<{width}}  {result.summary}")
        indent = " " * (12 + width)  # under the summary column
        if result.waiver and result.waived:
            lines.append(f"{indent}waived by {result.waiver.approver}: {result.waiver.reason}")
        for note in result.notes:
            lines.append(f"{indent}note: {note}")
    return "\n".join(lines)
