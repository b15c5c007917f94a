"""The model page: who holds each stage, what was refused and why, open recalls, the timeline
of holders, and every gate report (newest first)."""

from __future__ import annotations

from bisect import bisect_right
from dataclasses import dataclass
from datetime import datetime

from registry.errors import NotFound
from registry.gates.policy import RETIRED
from registry.service.gatekeeping import policy_of
from registry.service.queries.common import loads, moment
from registry.service.queries.recalls import RecallNotice, recall_notices, recalled_names
from registry.service.queries.reports import (
    ApprovalView,
    GateReportView,
    approval_view,
    report_view,
)
from registry.store import tables as t
from registry.store.catalogue import Catalogue
from registry.store.unit_of_work import UnitOfWork

OPENING = ("entered", "restored")
CLOSING = ("moved-on", "replaced", "rolled-back", "retired", "left")


@dataclass(frozen=True)
class Holder:
    version: int
    since: str
    recalled_upstream: tuple[str, ...]  # recalled datasets its lineage reaches


@dataclass(frozen=True)
class Rung:
    stage: str
    is_exclusive: bool
    holders: tuple[Holder, ...]


@dataclass(frozen=True)
class Refusal:
    report_id: int
    at: str
    stage: str
    gates: tuple[tuple[str, str], ...]  # (gate, place) of each failed gate


@dataclass(frozen=True)
class VersionLine:
    number: int
    description: str
    author: str
    created_at: str
    stages: tuple[str, ...]
    recalled_upstream: tuple[str, ...]
    latest_refusal: Refusal | None


@dataclass(frozen=True)
class Bar:
    """One holding of a stage: from the step it entered to the step it left (None: holds now)."""

    stage: str
    version: int
    start: int
    end: int | None
    entered_at: str
    left_at: str
    how_entered: str  # entered | restored


@dataclass(frozen=True)
class Mark:
    step: int
    stage: str
    version: int
    kind: str  # promotion | rollback | refusal
    report_id: int
    at: str


@dataclass(frozen=True)
class Timeline:
    lanes: tuple[str, ...]
    steps: int
    bars: tuple[Bar, ...]
    marks: tuple[Mark, ...]
    first_at: str
    last_at: str


@dataclass(frozen=True)
class ModelPage:
    name: str
    description: str
    ladder: tuple[Rung, ...]
    versions: tuple[VersionLine, ...]
    recalls: tuple[RecallNotice, ...]
    timeline: Timeline
    reports: tuple[GateReportView, ...]
    approvals: tuple[ApprovalView, ...]


def refusal_of(report: GateReportView) -> Refusal:
    return Refusal(report.id, report.at, report.stage,
                   tuple((r.gate, r.place) for r in report.failed))


def _timeline(events: list[tuple[t.StageEvent, int]], reports: list[GateReportView],
              report_times: dict[int, datetime], lanes: list[str]) -> Timeline:
    """Steps are the attempts (gate reports) and registrations in time order; every stage event
    belongs to the attempt that caused it, so bars and marks line up on one ordinal axis."""
    happenings = sorted([(report_times[r.id], ("report", r.id)) for r in reports]
                        + [(e.created_at, ("event", e.id)) for e, _ in events
                           if e.report_id is None and loads(e.details_json, {}).get("reason")
                           == "registered"], key=lambda h: (h[0], h[1]))
    step_of = {key: index for index, (_, key) in enumerate(happenings)}
    times = [when for when, _ in happenings]

    def step(event: t.StageEvent) -> int:
        if event.report_id is not None and ("report", event.report_id) in step_of:
            return step_of[("report", event.report_id)]
        if ("event", event.id) in step_of:
            return step_of[("event", event.id)]
        return max(bisect_right(times, event.created_at) - 1, 0)

    open_bars: dict[tuple[str, int], tuple[int, t.StageEvent]] = {}
    bars: list[Bar] = []
    for event, number in events:
        if event.stage not in lanes:
            lanes.append(event.stage)
        key = (event.stage, number)
        if event.event in OPENING:
            open_bars[key] = (step(event), event)
        elif event.event in CLOSING and key in open_bars:
            start, opened = open_bars.pop(key)
            bars.append(Bar(event.stage, number, start, max(step(event), start),
                            moment(opened.created_at), moment(event.created_at), opened.event))
    for (stage, number), (start, opened) in open_bars.items():
        bars.append(Bar(stage, number, start, None, moment(opened.created_at), "", opened.event))
    marks = []
    for report in reports:
        kind = ("refusal" if not report.passed else
                "rollback" if report.attempt == "rollback" else "promotion")
        if report.stage not in lanes:
            lanes.append(report.stage)
        marks.append(Mark(step_of[("report", report.id)], report.stage, report.version, kind,
                          report.id, report.at))
    bars.sort(key=lambda b: (lanes.index(b.stage), b.start))
    return Timeline(tuple(lanes), len(happenings), tuple(bars), tuple(marks),
                    moment(times[0]) if times else "", moment(times[-1]) if times else "")


def model_page(catalogue: Catalogue, name: str) -> ModelPage:
    with UnitOfWork(catalogue, write=False) as uow:
        model = uow.models.named(name)
        if model is None:
            raise NotFound(f"unknown model {name!r}", place="model")
        policy = policy_of(model)
        versions = uow.models.versions(model.id)
        number_of = {v.id: v.number for v in versions}
        holdings = uow.pages.holdings(model.id)
        held: dict[int, list[str]] = {}
        for holding, number in holdings:
            held.setdefault(number, []).append(holding.stage)
        recalled = {v.number: recalled_names(uow, v) for v in versions}
        rows = uow.pages.gate_reports(model.id)
        reports = [report_view(row, model.name, number) for row, number in rows]
        report_times = {row.id: row.created_at for row, _ in rows}
        refusals: dict[int, Refusal] = {}
        for report in reports:  # newest first: the first refusal met is the latest
            if not report.passed and report.version not in refusals:
                refusals[report.version] = refusal_of(report)
        ladder_stages = [*policy.ladder, RETIRED]
        extra = sorted({h.stage for h, _ in holdings} - set(ladder_stages))
        ladder = tuple(
            Rung(stage, policy.is_exclusive(stage) if stage in policy.stages else False,
                 tuple(Holder(number, moment(h.since), recalled[number])
                       for h, number in holdings if h.stage == stage))
            for stage in [*ladder_stages, *extra])
        lines = tuple(VersionLine(v.number, v.description, v.author, moment(v.created_at),
                                  tuple(held.get(v.number, ())), recalled[v.number],
                                  refusals.get(v.number)) for v in versions)
        timeline = _timeline(uow.pages.stage_events(model.id), sorted(
            reports, key=lambda r: (report_times[r.id], r.id)), report_times,
            [s for s in policy.ladder])
        approvals = tuple(approval_view(a, number_of.get(a.version_id, 0))
                          for a in uow.pages.approvals(list(number_of)))
        return ModelPage(model.name, model.description, ladder, lines,
                         recall_notices(uow, versions, held), timeline, tuple(reports), approvals)
