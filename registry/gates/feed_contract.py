"""The feed side's own check: can every version holding a stage read a proposed writer schema?

Pure: the resolutions (Avro specification, Schema Resolution) and the live-sample profiles come
in as evidence; a plain verdict comes out. A holder of an exclusive stage that cannot read the
schema refuses it; holders of other stages are listed so their owners know what breaks.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

from registry.gates.evidence import SampleProfile, SchemaProblem
from registry.gates.schema_gates import occurrences

MIN_ROWS = 100  # as live-data-check: fewest rows that can show a break unexercised


@dataclass(frozen=True)
class HolderReading:
    """One stage holder's input schema (reader) against the proposed writer schema."""

    model: str
    version: int
    stage: str
    is_exclusive: bool
    compatible: bool
    problems: tuple[SchemaProblem, ...] = ()
    notes: tuple[str, ...] = ()
    live_sample: SampleProfile | None = None


def _live_counts(problem: SchemaProblem, profile: SampleProfile | None) -> dict[str, Any] | None:
    """How often the holder's live sample holds what the break is about (None: no sample)."""
    if profile is None:
        return None
    counted, count, column = occurrences(problem, profile)
    if count is None:
        status = "unknown"
    elif count > 0:
        status = "exercised"
    elif profile.rows < MIN_ROWS:
        status = "unknown"
    else:
        status = "unexercised"
    return {"dataset": profile.dataset, "rows": profile.rows, "column": column,
            "counted": counted, "occurrences": count, "status": status}


def _holder(reading: HolderReading) -> dict[str, Any]:
    return {"model": reading.model, "version": reading.version, "stage": reading.stage,
            "exclusive": reading.is_exclusive, "reads": reading.compatible,
            "problems": [{"path": p.path, "rule": p.rule, "message": p.message,
                          "live": _live_counts(p, reading.live_sample)}
                         for p in reading.problems],
            "notes": list(reading.notes)}


def judge_feed_schema(feed: str, feed_version: int, readings: Sequence[HolderReading]
                      ) -> dict[str, Any]:
    """The verdict on publishing `feed_version` of `feed`: passed unless a holder of an
    exclusive stage cannot read it. Holders are listed exclusive stages first."""
    ordered = sorted(readings, key=lambda r: (not r.is_exclusive, r.model, r.stage, r.version))
    blocking = [r for r in ordered if r.is_exclusive and not r.compatible]
    others = [r for r in ordered if not r.is_exclusive and not r.compatible]
    if blocking:
        first = blocking[0]
        problem = first.problems[0] if first.problems else None
        where = f"{problem.path}: {problem.message}" if problem else "incompatible"
        summary = (f"{first.model} v{first.version}, holding {first.stage}, cannot read "
                   f"{feed} v{feed_version}: {where}")
        if len(blocking) > 1:
            summary += f" (and {len(blocking) - 1} more holder(s) of an exclusive stage)"
    elif not ordered:
        summary = f"no version reading {feed} holds a stage"
    else:
        summary = (f"every holder of an exclusive stage reads {feed} v{feed_version}"
                   + (f"; {len(others)} holder(s) of other stages cannot" if others else ""))
    return {"feed": feed, "feed_version": feed_version, "passed": not blocking,
            "summary": summary, "holders": [_holder(r) for r in ordered],
            "blocking": [f"{r.model}@{r.version}:{r.stage}" for r in blocking]}
