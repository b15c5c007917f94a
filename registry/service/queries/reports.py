"""Gate reports as people read them: failed and waived gates first, waivers with their reasons,
and the evidence turned into named facts (yes/no, numbers at a sensible precision, no raw keys).
"""

from __future__ import annotations

import json
import re
from dataclasses import dataclass
from typing import Any

from registry.gates.report import GateReport, GateResult
from registry.service.queries.common import moment, number
from registry.store import tables as t

ORDER = {"failed": 0, "waived": 1, "passed": 2}
MAX_DEPTH = 4
_PLACE = re.compile(r"^([^:]{1,60}): ")
_DIGEST = re.compile(r"^[0-9a-f]{32,64}$")
# Keys whose plain words differ from the key itself.
LABELS = {"ci_low": "interval from", "ci_high": "interval to", "p_value": "p-value",
          "n": "records", "psi": "PSI", "reader_version": "reading version",
          "writer_version": "writing version", "data_as_of": "data as of",
          "max_containment": "largest containment allowed", "include_error_bound":
          "error bound counted", "max_age_days": "oldest allowed (days)", "age_days": "age (days)"}


def plain_number(value: Any) -> str:
    """Numbers as a person reads them: whole numbers in full, others to four figures."""
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, int):
        return f"{value:,}" if abs(value) >= 10_000 else str(value)
    if not isinstance(value, float):
        return "—" if value is None else str(value)
    if value != value:
        return "not a number"
    if value == 0:
        return "0"
    if abs(value) >= 10_000:
        return f"{value:,.0f}"
    if abs(value) < 1e-4:
        return f"{value:.2e}"
    return f"{value:.4g}"


def label(key: Any) -> str:
    text = str(key)
    return LABELS.get(text, text.replace("_", " "))


@dataclass(frozen=True)
class EvidenceTable:
    columns: tuple[str, ...]
    rows: tuple[tuple[str, ...], ...]


@dataclass(frozen=True)
class EvidenceItem:
    """One named fact: a text, a table (a list of like records), or facts nested below it."""

    label: str
    text: str = ""
    table: EvidenceTable | None = None
    children: tuple[EvidenceItem, ...] = ()


def _inline(value: Any, depth: int = 0) -> str:
    """A value on one line, for a table cell."""
    if isinstance(value, dict):
        parts = [f"{label(k)} {_inline(v, depth + 1)}" for k, v in value.items()
                 if v not in (None, {}, [])]
        if "path" in value and "message" in value:
            return f"{value['path']}: {value['message']}"
        return "; ".join(parts) if depth < MAX_DEPTH else "…"
    if isinstance(value, (list, tuple)):
        return ", ".join(_inline(v, depth + 1) for v in value) if value else "none"
    if isinstance(value, str):
        # A digest reads as its start; the whole of it is on the dataset or version page.
        return value[:12] + "…" if _DIGEST.match(value) else value
    return plain_number(value)


def evidence_items(evidence: Any, depth: int = 0) -> tuple[EvidenceItem, ...]:
    """The evidence of one gate as named facts; absent values (None, {}) are left out."""
    if not isinstance(evidence, dict):
        return (EvidenceItem("value", _inline(evidence)),) if evidence not in (None, {}) else ()
    items = []
    for key, value in evidence.items():
        if value is None or value == {}:
            continue
        name = label(key)
        if isinstance(value, dict) and depth < MAX_DEPTH:
            items.append(EvidenceItem(name, children=evidence_items(value, depth + 1)))
        elif (isinstance(value, list) and value and all(isinstance(v, dict) for v in value)):
            columns: list[str] = []
            for row in value:
                columns += [k for k, v in row.items() if k not in columns and v not in (None, {})]
            rows = tuple(tuple(_inline(row.get(c)) if row.get(c) is not None else ""
                               for c in columns) for row in value)
            items.append(EvidenceItem(name, table=EvidenceTable(
                tuple(label(c) for c in columns), rows)))
        else:
            items.append(EvidenceItem(name, _inline(value)))
    return tuple(items)


@dataclass(frozen=True)
class WaiverView:
    approver: str
    reason: str


@dataclass(frozen=True)
class GateResultView:
    gate: str
    status: str  # passed | failed | waived
    summary: str
    place: str  # where it found the fault: a schema path, a feature, a slice; "" when none
    finding: str  # the summary without the place it starts with
    notes: tuple[str, ...]
    waiver: WaiverView | None
    evidence: tuple[EvidenceItem, ...]


@dataclass(frozen=True)
class GateReportView:
    id: int
    at: str
    model: str
    version: int
    stage: str
    attempt: str  # promote | rollback
    passed: bool
    by: str
    results: tuple[GateResultView, ...]  # failed, then waived, then passed

    @property
    def failed(self) -> tuple[GateResultView, ...]:
        return tuple(r for r in self.results if r.status == "failed")

    @property
    def waived(self) -> tuple[GateResultView, ...]:
        return tuple(r for r in self.results if r.status == "waived")

    @property
    def counts(self) -> dict[str, int]:
        found = {"passed": 0, "waived": 0, "failed": 0}
        for result in self.results:
            found[result.status] = found.get(result.status, 0) + 1
        return found


def _problem_paths(evidence: Any) -> list[str]:
    if not isinstance(evidence, dict):
        return []
    checks: list[Any] = evidence["checks"] if isinstance(evidence.get("checks"), list) else []
    if isinstance(evidence.get("check"), dict):
        checks = [*checks, evidence["check"]]
    paths = []
    for check in checks:
        problems = check.get("problems") if isinstance(check, dict) else None
        for problem in problems if isinstance(problems, list) else []:
            if isinstance(problem, dict) and isinstance(problem.get("path"), str):
                paths.append(problem["path"])
    return paths


def place_of(summary: str, evidence: Any) -> str:
    """The place a failed gate names: the first schema path at fault, else its summary's lead."""
    paths = _problem_paths(evidence)
    if paths:
        return paths[0]
    found = _PLACE.match(summary)
    return found.group(1) if found else ""


def _result(result: GateResult) -> GateResultView:
    status = "waived" if result.waived else "passed" if result.passed else "failed"
    place = place_of(result.summary, result.evidence) if status != "passed" else ""
    waiver = result.waiver if result.waived else None
    return GateResultView(
        gate=result.gate, status=status, summary=result.summary, place=place,
        finding=result.summary.removeprefix(f"{place}: ") if place else result.summary,
        notes=tuple(str(n) for n in result.notes),
        waiver=WaiverView(waiver.approver, waiver.reason) if waiver is not None else None,
        evidence=evidence_items(dict(result.evidence)))


def report_view(row: t.GateReportRow, model: str, number_: int) -> GateReportView:
    """A stored gate report, read back with the gates' own reader (GateReport.from_dict)."""
    report = GateReport.from_dict(json.loads(row.report_json))
    results = sorted((_result(result) for result in report.results),
                     key=lambda r: ORDER[r.status])
    return GateReportView(id=row.id, at=moment(row.created_at), model=model, version=number_,
                          stage=row.stage, attempt=row.attempt, passed=bool(row.passed),
                          by=row.created_by, results=tuple(results))


@dataclass(frozen=True)
class ApprovalView:
    version: int
    stage: str
    approver: str
    note: str
    at: str


def approval_view(row: t.Approval, number_: int) -> ApprovalView:
    return ApprovalView(number_, row.stage, row.approver, row.note or "", moment(row.created_at))


__all__ = ["ApprovalView", "EvidenceItem", "EvidenceTable", "GateReportView", "GateResultView",
           "WaiverView", "approval_view", "number", "place_of", "plain_number", "report_view"]
