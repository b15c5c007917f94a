"""Use cases that move versions between stages: check, promote, approve, roll back, retire.

Every attempt runs the stage's gates inside the same transaction that would move the version,
stores the gate report, and writes the audit event, so the catalogue never shows a move without
the evidence that allowed it.
"""

from __future__ import annotations

import dataclasses
import json
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

from registry.errors import Conflict, NotFound, Refusal, UserError
from registry.moments import utc_iso
from registry.names import check_name
from registry.node_ids import stage_id, version_id
from registry.service import gatekeeping, releases
from registry.service.actors import Actor
from registry.service.authorisation import authorise
from registry.service.models import find_model, find_version
from registry.service.recall import recalled_names_upstream
from registry.store import tables as t
from registry.store.catalogue import Catalogue
from registry.store.unit_of_work import UnitOfWork, utc_now


@dataclass(frozen=True)
class StageOutcome:
    model: str
    version: int
    stage: str
    moved: bool
    report: dict[str, Any]
    report_id: int | None = None
    displaced: int | None = None  # the version that left the exclusive stage
    notes: list[str] = field(default_factory=list)


@dataclass(frozen=True)
class HolderSnapshot:
    """Who held a stage when a command started; a promotion that finds it changed conflicts."""

    stage: str
    versions: tuple[int, ...]


def holders(uow: UnitOfWork, model: t.Model, stage: str) -> list[t.StageHolding]:
    return uow.stages.holdings(model.id, stage)


def _numbers(uow: UnitOfWork, holdings: list[t.StageHolding]) -> tuple[int, ...]:
    return tuple(sorted(uow.models.version_by_id(h.version_id).number for h in holdings))


def snapshot(catalogue: Catalogue, model: str, stage: str) -> HolderSnapshot:
    with UnitOfWork(catalogue, write=False) as uow:
        line = find_model(uow, model)
        return HolderSnapshot(stage, _numbers(uow, holders(uow, line, stage)))


def stages_of(uow: UnitOfWork, version: t.Version) -> list[str]:
    return uow.stages.stages_of(version.id)


def _event(uow: UnitOfWork, model: t.Model, version: t.Version, stage: str, event: str,
           actor: Actor, report_id: int | None = None, **details: Any) -> None:
    uow.stages.add_event(model_id=model.id, version_id=version.id, stage=stage, event=event,
                         details_json=json.dumps(details, sort_keys=True), report_id=report_id,
                         at=utc_now(), by=actor.name)


def _store_report(uow: UnitOfWork, model: t.Model, version: t.Version, stage: str,
                  attempt: str, report: gatekeeping.GateReport, actor: Actor) -> int:
    return uow.stages.add_report(model_id=model.id, version_id=version.id, stage=stage,
                                 attempt=attempt, passed=report.passed,
                                 report_json=json.dumps(report.to_dict()), at=utc_now(),
                                 by=actor.name)


def _leave_other_ladder_stages(uow: UnitOfWork, model: t.Model, version: t.Version,
                               stage: str, actor: Actor) -> None:
    """A version moves up its ladder: it leaves the stages it held below the new one."""
    for holding in uow.stages.holdings_of_version(version.id):
        if holding.stage == stage:
            continue
        _event(uow, model, version, holding.stage, "moved-on", actor, to_stage=stage)
        uow.stages.release(holding)


def _place(uow: UnitOfWork, model: t.Model, version: t.Version, stage: str, is_exclusive: bool,
           report_id: int | None, actor: Actor, *, event: str = "entered",
           previous_version_id: int | None = None) -> int | None:
    """Put a version into a stage, displacing the holder of an exclusive stage. Returns the
    displaced version's number."""
    displaced_number = None
    displaced_id = previous_version_id
    if is_exclusive:
        for holding in holders(uow, model, stage):
            if holding.version_id == version.id:
                continue
            displaced = uow.models.version_by_id(holding.version_id)
            displaced_number, displaced_id = displaced.number, displaced.id
            if previous_version_id is not None:
                displaced_id = previous_version_id
            _event(uow, model, displaced, stage, "replaced", actor, report_id,
                   by_version=version.number)
            uow.stages.release(holding)
            # It goes back to the first stage of the ladder, where it can be promoted again.
            _return_to_start(uow, model, displaced, actor)
    _leave_other_ladder_stages(uow, model, version, stage, actor)
    uow.stages.hold(model_id=model.id, version_id=version.id, stage=stage,
                    is_exclusive=is_exclusive, since=utc_now(), report_id=report_id,
                    previous_version_id=displaced_id)
    details = {"displaced_version": displaced_number} if displaced_number is not None else {}
    _event(uow, model, version, stage, event, actor, report_id, **details)
    return displaced_number


def _return_to_start(uow: UnitOfWork, model: t.Model, version: t.Version, actor: Actor,
                     reason: str = "left a stage it held") -> None:
    policy = gatekeeping.policy_of(model)
    start = policy.ladder[0]
    if start not in stages_of(uow, version):
        uow.stages.hold(model_id=model.id, version_id=version.id, stage=start,
                        is_exclusive=policy.is_exclusive(start), since=utc_now())
        _event(uow, model, version, start, "entered", actor, reason=reason)


def enter_first_stage(uow: UnitOfWork, model: t.Model, version: t.Version, actor: Actor) -> None:
    """A newly registered version starts on the first stage of its model's ladder."""
    _return_to_start(uow, model, version, actor, reason="registered")


def check(catalogue: Catalogue, model: str, number: int, stage: str, actor: Actor,
          waivers: Sequence[gatekeeping.Waiver] = ()) -> StageOutcome:
    """The gates of a stage for a version, as a dry run: nothing is written."""
    with UnitOfWork(catalogue, write=False) as uow:
        line = find_model(uow, model)
        version = find_version(uow, line, number)
        _authorise_waivers(uow, actor, version, waivers)
        policy = gatekeeping.policy_of(line)
        policy.check_transition(stages_of(uow, version), stage)
        report = gatekeeping.run_gates(uow, line, version, stage, actor, waivers, policy=policy)
        return StageOutcome(line.name, number, stage, False, report.to_dict())


def promote(catalogue: Catalogue, model: str, number: int, stage: str, actor: Actor,
            waivers: Sequence[gatekeeping.Waiver] = (), expected: HolderSnapshot | None = None
            ) -> StageOutcome:
    """Move a version into a stage if its gates allow; store the attempt's report either way."""
    check_name(stage, what="stage")
    with UnitOfWork(catalogue) as uow:
        line = find_model(uow, model)
        version = find_version(uow, line, number)
        policy = gatekeeping.policy_of(line)
        authorise(uow, actor, "stage.guarded-move" if gatekeeping.is_guarded(policy, stage)
                  else "stage.promote", place="--to")
        _authorise_waivers(uow, actor, version, waivers)
        current = stages_of(uow, version)
        if stage in current:
            raise UserError(f"version {number} already holds {stage!r}", place="--to")
        policy.check_transition(current, stage)
        now = _numbers(uow, holders(uow, line, stage))
        if expected is not None and policy.is_exclusive(stage) and now != expected.versions:
            raise Conflict(f"{stage!r} changed while this promotion waited (now held by "
                           f"{_describe(now)}, was {_describe(expected.versions)}); check again")
        report = gatekeeping.run_gates(uow, line, version, stage, actor, waivers, policy=policy)
        report_id = _store_report(uow, line, version, stage, "promote", report, actor)
        displaced = None
        if report.passed:
            displaced = _place(uow, line, version, stage, policy.is_exclusive(stage), report_id,
                               actor)
        uow.audit.append(actor.name, "stage.promote" if report.passed else "stage.refuse",
                         version_id(line.name, number),
                         {"stage": stage, "passed": report.passed, "report_id": report_id,
                          "displaced_version": displaced, "summary": report.summary(),
                          "waivers": [dataclasses.asdict(w) for w in report.waivers]})
        if report.passed and policy.is_exclusive(stage):
            releases.record_move(uow, actor.name, line, version, stage, move="entered",
                                 reason="promotion", previous_holder=displaced,
                                 holder_after=number, report=report,
                                 moved_by=releases.moving_event(uow))
        uow.commit()
        return StageOutcome(line.name, number, stage, report.passed, report.to_dict(), report_id,
                            displaced)


def _authorise_waivers(uow: UnitOfWork, actor: Actor, version: t.Version,
                       waivers: Sequence[gatekeeping.Waiver]) -> None:
    if waivers:
        authorise(uow, actor, "gate.waive", authors=(version.author, version.created_by),
                  place=f"waiver of {waivers[0].gate}")


def _describe(numbers: tuple[int, ...]) -> str:
    return ", ".join(f"v{n}" for n in numbers) or "no version"


def approve(catalogue: Catalogue, model: str, number: int, stage: str, actor: Actor,
            note: str = "") -> dict[str, Any]:
    """Record one approver's approval of a version for a stage (never the version's author)."""
    with UnitOfWork(catalogue) as uow:
        line = find_model(uow, model)
        version = find_version(uow, line, number)
        policy = gatekeeping.policy_of(line)
        authorise(uow, actor, "version.approve", authors=(version.author, version.created_by),
                  place="approve")
        policy.stage(stage)
        existing = uow.stages.approval(version.id, stage, actor.name)
        if existing is None:
            uow.stages.approve(version_id=version.id, stage=stage, approver=actor.name,
                               note=note, at=utc_now())
            uow.audit.append(actor.name, "version.approve", version_id(line.name, number),
                             {"stage": stage, "note": note})
        count = len(uow.stages.approvals(version.id, stage))
        uow.commit()
        return {"model": line.name, "version": number, "stage": stage, "approver": actor.name,
                "approvals": count, "recorded": existing is None}


def rollback(catalogue: Catalogue, model: str, stage: str, actor: Actor,
             waivers: Sequence[gatekeeping.Waiver] = ()) -> StageOutcome:
    """Give an exclusive stage back to the version its holder displaced, in one transaction,
    after re-running the schema gates against the feed the current holder reads."""
    with UnitOfWork(catalogue) as uow:
        line = find_model(uow, model)
        policy = gatekeeping.policy_of(line)
        policy.stage(stage)
        authorise(uow, actor, "stage.guarded-move" if gatekeeping.is_guarded(policy, stage)
                  else "stage.rollback", place="--stage")
        if not policy.is_exclusive(stage):
            raise UserError(f"{stage!r} is not an exclusive stage; roll back works on a stage "
                            "held by one version", place="--stage")
        current = holders(uow, line, stage)
        if not current:
            raise UserError(f"no version holds {stage!r}; there is nothing to roll back",
                            place="--stage")
        holding = current[0]
        holder = uow.models.version_by_id(holding.version_id)
        if holding.previous_version_id is None:
            raise UserError(f"v{holder.number} was the first version to hold {stage!r}; there is "
                            "no earlier holder to restore", place="--stage")
        previous = uow.models.version_by_id(holding.previous_version_id)
        _authorise_waivers(uow, actor, previous, waivers)
        if "retired" in stages_of(uow, previous):
            raise UserError(f"v{previous.number}, the previous holder, is retired",
                            place="--stage")
        report = gatekeeping.run_rollback_gates(uow, line, previous, holder, stage, actor,
                                                waivers, policy=policy)
        report_id = _store_report(uow, line, previous, stage, "rollback", report, actor)
        if report.passed:
            uow.stages.release(holding)
            _event(uow, line, holder, stage, "rolled-back", actor, report_id,
                   restored_version=previous.number)
            _return_to_start(uow, line, holder, actor)
            earlier = _earlier_holder(uow, line, previous, stage)
            _place(uow, line, previous, stage, True, report_id, actor, event="restored",
                   previous_version_id=earlier)
        uow.audit.append(actor.name, "stage.rollback" if report.passed else "stage.refuse",
                         stage_id(line.name, stage),
                         {"stage": stage, "from_version": holder.number,
                          "to_version": previous.number, "passed": report.passed,
                          "report_id": report_id, "summary": report.summary()})
        if report.passed:
            moved_by = releases.moving_event(uow)
            for moved, move in ((holder, "left"), (previous, "entered")):
                releases.record_move(uow, actor.name, line, moved, stage, move=move,
                                     reason="rollback", previous_holder=holder.number,
                                     holder_after=previous.number, report=report,
                                     moved_by=moved_by)
        uow.commit()
        return StageOutcome(line.name, previous.number, stage, report.passed, report.to_dict(),
                            report_id, holder.number if report.passed else None)


def _earlier_holder(uow: UnitOfWork, model: t.Model, version: t.Version, stage: str) -> int | None:
    """Who the restored version itself had displaced when it first took the stage, so a
    second rollback can go one step further back."""
    for event in uow.stages.replacements(model.id, stage):
        if json.loads(event.details_json or "{}").get("by_version") == version.number:
            return event.version_id
    return None


def retire(catalogue: Catalogue, model: str, number: int, actor: Actor,
           reason: str = "") -> dict[str, Any]:
    """Take a version out of service: it leaves every stage it holds and enters `retired`."""
    with UnitOfWork(catalogue) as uow:
        line = find_model(uow, model)
        version = find_version(uow, line, number)
        policy = gatekeeping.policy_of(line)
        held = stages_of(uow, version)
        guarded = [s for s in held if gatekeeping.is_guarded(policy, s)]
        authorise(uow, actor, "stage.guarded-move" if guarded else "version.retire",
                  place="retire")
        if "retired" in held:
            raise UserError(f"version {number} is already retired", place="retire")
        # Row by row, not a bulk DELETE, so the unit of work sees each deleted holding.
        for holding in uow.stages.holdings_of_version(version.id):
            uow.stages.release(holding)
        for stage in held:
            _event(uow, line, version, stage, "retired", actor, reason=reason)
        uow.stages.hold(model_id=line.id, version_id=version.id, stage="retired",
                        is_exclusive=False, since=utc_now())
        _event(uow, line, version, "retired", "entered", actor, reason=reason)
        uow.audit.append(actor.name, "version.retire", version_id(line.name, number),
                         {"left_stages": held, "reason": reason})
        moved_by = releases.moving_event(uow)
        for stage in held:
            if policy.is_exclusive(stage):
                releases.record_move(uow, actor.name, line, version, stage, move="left",
                                     reason="retirement", previous_holder=number,
                                     holder_after=None, report=None, moved_by=moved_by)
        uow.commit()
        return {"model": line.name, "version": number, "left_stages": held, "retired": True}


def history(catalogue: Catalogue, model: str) -> dict[str, Any]:
    """Every stage event of a model, oldest first, each with the gate report behind it."""
    with UnitOfWork(catalogue, write=False) as uow:
        line = find_model(uow, model)
        events = []
        for event, number in uow.stages.events_of_model(line.id):
            report = None
            if event.report_id is not None:
                row = uow.stages.report(event.report_id)
                report = json.loads(row.report_json) if row is not None else None
            events.append({"at": utc_iso(event.created_at), "version": number,
                           "stage": event.stage, "event": event.event, "by": event.created_by,
                           "details": json.loads(event.details_json or "{}"),
                           "report_id": event.report_id, "report": report})
        attempts = [{"id": row.id, "version": number, "stage": row.stage, "attempt": row.attempt,
                     "passed": row.passed, "at": utc_iso(row.created_at),
                     "by": row.created_by}
                    for row, number in uow.stages.reports_of_model(line.id)]
        return {"model": line.name, "events": events, "attempts": attempts}


def status(catalogue: Catalogue, model: str) -> dict[str, Any]:
    """Who holds each stage of the model's ladder now (every ladder stage listed)."""
    with UnitOfWork(catalogue, write=False) as uow:
        line = find_model(uow, model)
        policy = gatekeeping.policy_of(line)
        stages = {}
        flagged: dict[int, dict[str, Any]] = {}
        for stage in [*policy.ladder, "retired"]:
            holdings = holders(uow, line, stage)
            stages[stage] = list(_numbers(uow, holdings))
            if stage == "retired":
                continue  # out of service: nothing to act on
            for holding in holdings:
                number = uow.names.version_number(holding.version_id)
                if number not in flagged:
                    flagged[number] = {"version": number, "stages": [],
                                       "recalled": recalled_names_upstream(uow,
                                                                           holding.version_id)}
                flagged[number]["stages"].append(stage)
        from registry.service.serving_reports import states_in

        return {"model": line.name, "stages": stages,
                "exclusive": [s for s in policy.ladder if policy.is_exclusive(s)],
                "recalled_upstream": [f for _, f in sorted(flagged.items()) if f["recalled"]],
                # steady, drifting or degrading, per version that served (evidence after release)
                "after_release": states_in(uow, line)}


def find_report(catalogue: Catalogue, report_id: int) -> dict[str, Any]:
    with UnitOfWork(catalogue, write=False) as uow:
        row = uow.stages.report(report_id)
        if row is None:
            raise NotFound(f"no gate report {report_id}", place="report")
        return json.loads(row.report_json)


__all__ = ["approve", "check", "history", "promote", "retire", "rollback", "snapshot", "status",
           "Refusal"]
