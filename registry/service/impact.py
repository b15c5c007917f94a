"""What changes if a version enters a stage: the feed versions it must read, the consumers that
must read its output, the features whose meaning changes, the metrics and slices that move
against the incumbent, and the datasets newly relied on. A read: nothing is written.

The evidence is the gates' own (registry.service.gatekeeping), so the view and the gates that
later judge the move cannot disagree.
"""

from __future__ import annotations

from typing import Any

from registry import gates
from registry.names import check_name
from registry.service import evidence_sources as sources
from registry.service.gatekeeping import gather_evidence, policy_of, top_holder
from registry.service.models import find_model, find_version, holders_by_stage
from registry.store import tables as t
from registry.store.catalogue import Catalogue
from registry.store.unit_of_work import UnitOfWork

QUALITY_GATES = ("no-regression", "slice-guard")


def _problems(problems) -> list[dict[str, str]]:
    return [{"path": p.path, "rule": p.rule, "message": p.message} for p in problems]


def moves(difference: float, ci_low: float, ci_high: float, higher_is_better: bool) -> str:
    """`better` or `worse` when the whole interval lies on one side of zero, else `steady`."""
    if ci_low > 0 or ci_high < 0:
        up = difference > 0
        return "better" if up == higher_is_better else "worse"
    return "steady"


def _feeds(evidence: gates.Evidence) -> list[dict[str, Any]]:
    if evidence.feed_name is not None:
        return [{"feed": c.feed, "feed_version": c.feed_version, "writer_version": None,
                 "published_at": c.published_at, "current": c.is_current,
                 "compatible": c.compatible, "problems": _problems(c.problems),
                 "notes": list(c.notes)} for c in evidence.feed_checks]
    if evidence.feed is not None:  # no declared feed: the incumbent's input is what is written
        c = evidence.feed
        return [{"feed": None, "feed_version": None, "writer_version": c.writer_version,
                 "published_at": None, "current": True, "compatible": c.compatible,
                 "problems": _problems(c.problems), "notes": list(c.notes)}]
    return []


def _consumers(evidence: gates.Evidence) -> list[dict[str, Any]]:
    if evidence.consumer_checks:
        return [{"consumer": c.consumer, "schema_version": c.schema_version, "owner": c.owner,
                 "reads_like_version": None, "compatible": c.compatible,
                 "problems": _problems(c.problems), "notes": list(c.notes)}
                for c in evidence.consumer_checks]
    if evidence.output is not None:  # no declared consumer: they read the incumbent's output
        c = evidence.output
        return [{"consumer": None, "schema_version": None, "owner": "",
                 "reads_like_version": c.reader_version, "compatible": c.compatible,
                 "problems": _problems(c.problems), "notes": list(c.notes)}]
    return []


def _metrics(evidence: gates.Evidence) -> list[dict[str, Any]]:
    return [{"metric": c.metric, "candidate": c.candidate_value, "incumbent": c.incumbent_value,
             "difference": c.difference, "ci_low": c.ci_low, "ci_high": c.ci_high,
             "confidence": c.confidence, "p_value": c.p_value, "method": c.method,
             "rows": c.rows,
             "moves": ("not compared" if c.method == "not-compared" else
                       moves(c.difference, c.ci_low, c.ci_high, c.higher_is_better))}
            for c in evidence.comparisons]


def _slices(evidence: gates.Evidence) -> list[dict[str, Any]]:
    moved = []
    for s in evidence.slices:
        direction = moves(s.difference, s.ci_low, s.ci_high, s.higher_is_better)
        if direction != "steady":
            moved.append({"column": s.column, "value": s.value, "metric": s.metric,
                          "difference": s.difference, "ci_low": s.ci_low, "ci_high": s.ci_high,
                          "confidence": s.confidence, "p_value": s.p_value,
                          "adjusted_p_value": s.adjusted_p_value, "rows": s.rows,
                          "moves": direction})
    return moved


def _new_datasets(uow: UnitOfWork, candidate: t.Version, incumbent: t.Version | None
                  ) -> list[dict[str, Any]]:
    before = ({(relation, d.id) for relation, d in sources.linked_datasets(uow, incumbent)}
              if incumbent is not None else set())
    return [{"dataset": d.name, "relation": relation, "role": d.role,
             "recalled": d.recalled_at is not None}
            for relation, d in sources.linked_datasets(uow, candidate)
            if (relation, d.id) not in before]


def impact_in(uow: UnitOfWork, model: str, number: int, stage: str) -> dict[str, Any]:
    """The impact document, inside an open unit of work."""
    check_name(stage, what="stage")
    line = find_model(uow, model)
    version = find_version(uow, line, number)
    policy = policy_of(line)
    policy.stage(stage)  # an unknown stage is a user error
    incumbent = None
    if policy.is_exclusive(stage):
        held = holders_by_stage(uow, line).get(stage)
        incumbent = find_version(uow, line, held[0]) if held else None
    if incumbent is None:
        incumbent = top_holder(uow, line, policy)
    # Metrics are compared as the quality gates of the stage would, or else as the top stage's.
    judged = stage if any(spec.gate in QUALITY_GATES for spec in policy.gates_for(stage)) \
        else policy.top_stage
    evidence = gather_evidence(uow, line, version, judged, policy, incumbent=incumbent)
    same = incumbent is not None and incumbent.id == version.id
    return {"model": line.name, "version": version.number, "stage": stage,
            "incumbent": None if incumbent is None or same else incumbent.number,
            "feeds": _feeds(evidence), "consumers": _consumers(evidence),
            "features": [{"field": c.field, "kind": c.kind, "classification": c.classification,
                          "message": c.message} for c in evidence.feature_changes],
            "metrics": _metrics(evidence), "slices": _slices(evidence),
            "datasets": _new_datasets(uow, version, None if same else incumbent)}


def impact_of(catalogue: Catalogue, model: str, number: int, stage: str) -> dict[str, Any]:
    """What changes if version `number` of `model` enters `stage`; changes nothing."""
    with UnitOfWork(catalogue, write=False) as uow:
        return impact_in(uow, model, number, stage)


def ladder_of(catalogue: Catalogue, model: str) -> list[str]:
    """The stages a version of `model` may be asked about, bottom to top."""
    with UnitOfWork(catalogue, write=False) as uow:
        return list(policy_of(find_model(uow, model)).ladder)
