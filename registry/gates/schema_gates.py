"""The schema gates: the candidate reads the live feed, rollback stays safe, consumers read its
output, and the data-aware check that weighs each static break against the live sample."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from registry.gates.contract_gates import (
    consumers_read_output,
    declared_feed_check,
    reads_declared_feed,
    rollback_reads_declared_feed,
)
from registry.gates.contract_gates import first_problem as _first_problem
from registry.gates.evidence import Evidence, SampleProfile, SchemaProblem
from registry.gates.report import GateResult
from registry.plain import to_plain

NO_INCUMBENT = "no incumbent: nothing to compare against"
NOTHING_TO_COMPARE = ("no version holds the top of the ladder yet (first version into it): "
                      "there was nothing to compare against")


def _missing(gate: str, what: str) -> GateResult:
    return GateResult(gate, False, False,
                      f"no {what} was supplied; the gate cannot pass without it")


def no_incumbent(gate: str, evidence: Evidence) -> GateResult:
    """The verdict of a comparing gate with no other version to compare against: none holds
    the top of the ladder yet, or the candidate holds it itself."""
    if evidence.holds_top_stage:
        itself = (f"version {evidence.version} itself holds {evidence.holds_top_stage}: there is "
                  "no other version to compare against")
        return GateResult(gate, True, False, NO_INCUMBENT, notes=(itself,))
    return GateResult(gate, True, False, NO_INCUMBENT, notes=(NOTHING_TO_COMPARE,))


def reads_live_feed(evidence: Evidence, settings: Mapping[str, Any], stage: str) -> GateResult:
    """Candidate input schema as reader resolves the live version's input schema as writer."""
    gate = "reads-live-feed"
    if evidence.feed_name is not None:
        return reads_declared_feed(evidence)
    if not evidence.has_incumbent:
        return no_incumbent(gate, evidence)
    if evidence.feed is None:
        return _missing(gate, "check of the candidate's input schema against the live feed")
    checks = [evidence.feed]
    if settings["include_past_feeds"]:
        checks += [check for check in evidence.past_feeds
                   if check.writer_version != evidence.feed.writer_version]
    facts = {"checks": to_plain(checks)}
    failing = [check for check in checks if not check.compatible]
    if not failing:
        writers = ", ".join(str(check.writer_version) for check in checks)
        return GateResult(gate, True, False,
                          f"version {evidence.version} reads the feed written by "
                          f"version{'s' if len(checks) > 1 else ''} {writers}", facts,
                          notes=tuple(note for check in checks for note in check.notes))
    worst = failing[0]
    notes = tuple(f"also cannot read the feed of version {check.writer_version}: "
                  f"{_first_problem(check)}" for check in failing[1:])
    return GateResult(gate, False, False,
                      f"{_first_problem(worst)} (version {worst.reader_version} reading the feed "
                      f"written by version {worst.writer_version})", facts, notes)


def rollback_safe(evidence: Evidence, settings: Mapping[str, Any], stage: str) -> GateResult:
    """Live version's input schema as reader resolves the candidate's input schema as writer,
    so the live version can come back and read whatever the candidate's feed wrote."""
    gate = "rollback-safe"
    if not evidence.has_incumbent:
        return no_incumbent(gate, evidence)
    if evidence.feed_name is not None:
        return rollback_reads_declared_feed(evidence)
    check = evidence.rollback
    if check is None:
        return _missing(gate, "check of the live version's input schema against the candidate's")
    facts = {"check": to_plain(check)}
    if check.compatible:
        return GateResult(gate, True, False,
                          f"version {check.reader_version} can read records written for version "
                          f"{check.writer_version}, so rolling back is safe", facts, check.notes)
    return GateResult(gate, False, False,
                      f"{_first_problem(check)} (after a rollback version {check.reader_version} "
                      f"could not read records written for version {check.writer_version})",
                      facts, check.notes)


def output_readable(evidence: Evidence, settings: Mapping[str, Any], stage: str) -> GateResult:
    """Live version's output schema, the consumers' reader, resolves the candidate's output."""
    gate = "output-readable"
    if evidence.consumer_checks:
        return consumers_read_output(evidence)
    if not evidence.has_incumbent:
        return no_incumbent(gate, evidence)
    check = evidence.output
    if check is None:
        return _missing(gate, "check of the candidate's output schema against the live output")
    facts = {"check": to_plain(check)}
    if check.compatible:
        return GateResult(gate, True, False,
                          f"consumers reading version {check.reader_version}'s output can read "
                          f"version {check.writer_version}'s", facts, check.notes)
    return GateResult(gate, False, False,
                      f"{_first_problem(check)} (consumers reading version "
                      f"{check.reader_version}'s output cannot read version "
                      f"{check.writer_version}'s)", facts, check.notes)


def _column(problem: SchemaProblem) -> str | None:
    if "column" in problem.witness:
        return str(problem.witness["column"])
    parts = problem.path.split("/")
    return parts[2] if len(parts) > 2 and parts[1] == "fields" else None


def occurrences(problem: SchemaProblem, profile: SampleProfile) -> tuple[str, int | None, str]:
    """How often the live sample exercises a break: (what is counted, count or None, column)."""
    column = _column(problem) or "?"
    witness = problem.witness
    counts = profile.columns.get(column)
    if "enum_symbol" in witness:
        what = f"symbol {witness['enum_symbol']}"
        count = None if counts is None else counts.enum_symbols.get(witness["enum_symbol"], 0)
        return what, count, column
    if "union_branch" in witness:
        branch = str(witness["union_branch"])
        what = f"union branch {branch}"
        if counts is None:
            return what, None, column
        if branch == "null" and branch not in counts.union_branches:
            return what, counts.nulls, column
        return what, counts.union_branches.get(branch, 0), column
    if witness.get("null"):
        return "null", None if counts is None else counts.nulls, column
    return "every record", profile.rows, column


def live_data_check(evidence: Evidence, settings: Mapping[str, Any], stage: str) -> GateResult:
    """Weigh each static break of reads-live-feed against the registered live sample's profile:
    a break whose witness never occurs there is reported as unexercised, with the counts."""
    gate = "live-data-check"
    check = declared_feed_check(evidence)
    if check is None:
        if not evidence.has_incumbent:
            return no_incumbent(gate, evidence)
        check = evidence.feed
    if check is None:
        return _missing(gate, "check of the candidate's input schema against the live feed")
    if check.compatible:
        return GateResult(gate, True, False, f"version {check.reader_version} reads the live "
                          "feed: no static break to weigh against the live sample",
                          {"check": to_plain(check)})
    profile = evidence.live_sample
    if not check.problems:
        return GateResult(gate, False, False, f"{_first_problem(check)}; with no problem named "
                          "there is no witness to count in the live sample",
                          {"check": to_plain(check)})
    if profile is None:
        return GateResult(gate, False, False,
                          f"{_first_problem(check)}; no live sample is registered, so whether "
                          "the live feed exercises the break cannot be told",
                          {"check": to_plain(check)})
    findings = []
    for problem in check.problems:
        what, count, column = occurrences(problem, profile)
        if count is None:
            status = "unknown"  # the column was not profiled
        elif count > 0:
            status = "exercised"
        elif profile.rows < settings["min_rows"]:
            status = "unknown"  # too few rows to show a break unexercised
        else:
            status = "unexercised"
        findings.append({"path": problem.path, "rule": problem.rule, "message": problem.message,
                         "witness": dict(problem.witness), "column": column, "counted": what,
                         "occurrences": count, "rows": profile.rows, "status": status})
    facts = {"live_sample": {"dataset": profile.dataset, "fingerprint": profile.fingerprint,
                             "rows": profile.rows},
             "findings": findings}
    blocking = {"exercised", "unknown"} | ({"unexercised"} if settings["unexercised_blocks"]
                                           else set())
    blockers = [finding for finding in findings if finding["status"] in blocking]
    unexercised = [finding for finding in findings if finding["status"] == "unexercised"]
    shown = blockers[0] if blockers else unexercised[0]  # the finding the summary names
    notes = tuple(f"{finding['path']}: {_describe(finding, profile)}" for finding in findings
                  if finding is not shown)
    if not blockers:
        first = unexercised[0]
        return GateResult(gate, True, False,
                          f"{len(unexercised)} static break{'s' if len(unexercised) > 1 else ''} "
                          f"the live sample never exercises: {first['path']}: {first['counted']} "
                          f"occurs 0 times in {profile.rows} rows of {profile.dataset}",
                          facts, notes)
    first = blockers[0]
    return GateResult(gate, False, False, f"{first['path']}: {first['message']}; "
                      f"{_describe(first, profile)}", facts, notes)


def _describe(finding: Mapping[str, Any], profile: SampleProfile) -> str:
    where = f"{profile.rows} rows of {profile.dataset}"
    status = finding["status"]
    if status == "exercised" and not finding["witness"]:
        return f"every record exercises it: all {where}"
    if status == "exercised":
        return f"{finding['counted']} occurs {finding['occurrences']} times in {where}"
    if status == "unexercised":
        return (f"{finding['counted']} occurs 0 times in {where}; the live feed has not "
                "exercised this break")
    if finding["occurrences"] is None:
        return (f"column {finding['column']} is not in the live sample's profile, so the "
                "break may be exercised")
    return f"{finding['counted']} occurs 0 times in {where}, too few rows to show it unexercised"
