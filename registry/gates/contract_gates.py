"""The schema gates judged against declared contracts: the feed a model reads (every writer
schema still in flight) and the consumers that read its output (each one's reader schema).

Every verdict comes from Avro Schema Resolution, already worked out in the evidence; these
functions only weigh it and name the feed version or consumer of each problem.
"""

from __future__ import annotations

from collections.abc import Sequence

from registry.gates.evidence import ConsumerCheck, Evidence, FeedSchemaCheck, SchemaCheck
from registry.gates.report import GateResult
from registry.plain import to_plain


def first_problem(check: SchemaCheck | FeedSchemaCheck | ConsumerCheck) -> str:
    """The first problem of a check with its path, and how many more there are."""
    if not check.problems:
        return "incompatible (the schema check gave no detail)"
    first = check.problems[0]
    more = len(check.problems) - 1
    tail = f" (and {more} more problem{'s' if more > 1 else ''})" if more else ""
    return f"{first.path}: {first.message}{tail}"


def _feed_label(check: FeedSchemaCheck) -> str:
    return f"{check.feed} v{check.feed_version}" + ("" if check.is_current else
                                                   f" (published {check.published_at[:10]}, "
                                                   "still in flight)")


def _judge_feed(gate: str, evidence: Evidence, checks: Sequence[FeedSchemaCheck], who: str,
                verb: str) -> GateResult:
    facts = {"feed": evidence.feed_name, "checks": to_plain(checks)}
    if not checks:
        return GateResult(gate, False, False,
                          f"feed {evidence.feed_name} has no published schema: publish its "
                          "writer schema (`lockkeeper feed publish`) before any version "
                          "reading it moves", facts)
    failing = [check for check in checks if not check.compatible]
    notes = tuple(note for check in checks for note in check.notes)
    if not failing:
        versions = ", ".join(f"v{check.feed_version}" for check in checks)
        return GateResult(gate, True, False,
                          f"{who} {verb} every schema of feed {evidence.feed_name} in flight "
                          f"({versions})", facts, notes)
    worst = failing[0]
    notes += tuple(f"also cannot read {_feed_label(check)}: {first_problem(check)}"
                   for check in failing[1:])
    return GateResult(gate, False, False,
                      f"{first_problem(worst)} ({who} cannot read {_feed_label(worst)})",
                      facts, notes)


def reads_declared_feed(evidence: Evidence) -> GateResult:
    """reads-live-feed for a model with a declared feed: the candidate's input schema, as
    reader, resolves every writer schema of the feed in flight, whether or not any version
    holds the top stage yet."""
    return _judge_feed("reads-live-feed", evidence, evidence.feed_checks,
                       f"version {evidence.version}", "reads")


def rollback_reads_declared_feed(evidence: Evidence) -> GateResult:
    """rollback-safe for a model with a declared feed: the version a rollback would restore
    (the incumbent) still reads every writer schema of the feed in flight."""
    return _judge_feed("rollback-safe", evidence, evidence.rollback_feed_checks,
                       f"version {evidence.incumbent_version}, the version a rollback "
                       "restores,", "reads")


def declared_feed_check(evidence: Evidence) -> SchemaCheck | None:
    """For live-data-check: the break of reads-live-feed to weigh against the live sample when
    the model declares its feed (the first feed schema in flight the candidate cannot read, else
    the current one), as a plain schema check; None without a declared, published feed."""
    if evidence.feed_name is None or not evidence.feed_checks:
        return None
    failing = [check for check in evidence.feed_checks if not check.compatible]
    chosen = failing[0] if failing else evidence.feed_checks[0]
    return SchemaCheck(reader_version=evidence.version, writer_version=chosen.feed_version,
                       compatible=chosen.compatible, problems=chosen.problems,
                       notes=chosen.notes)


def consumers_read_output(evidence: Evidence) -> GateResult:
    """output-readable for a model with declared consumers: each consumer's current reader
    schema resolves the candidate's output schema as writer."""
    gate = "output-readable"
    checks = evidence.consumer_checks
    facts = {"checks": to_plain(checks)}
    failing = [check for check in checks if not check.compatible]
    notes = tuple(note for check in checks for note in check.notes)
    if not failing:
        names = ", ".join(check.consumer for check in checks)
        return GateResult(gate, True, False,
                          f"every declared consumer ({names}) reads version "
                          f"{evidence.version}'s output", facts, notes)
    worst = failing[0]
    notes += tuple(f"consumer {check.consumer} also cannot read it: {first_problem(check)}"
                   for check in failing[1:])
    return GateResult(gate, False, False,
                      f"{first_problem(worst)} (consumer {worst.consumer}, reader schema "
                      f"v{worst.schema_version}, cannot read version {evidence.version}'s output)",
                      facts, notes)
