"""Stage holdings, stage events, gate reports and approvals: the rows of a version's moves."""

from __future__ import annotations

from collections.abc import Iterable
from datetime import datetime

from sqlalchemy import select
from sqlalchemy.orm import Session

from registry.store import tables as t
from registry.store.lineage import id_chunks


class StageRepository:
    def __init__(self, session: Session) -> None:
        self._session = session

    # --- holdings: who holds which stage now ---

    def holdings(self, model_id: int, stage: str) -> list[t.StageHolding]:
        """The holdings of one stage, oldest first."""
        return list(self._session.execute(
            select(t.StageHolding).where(t.StageHolding.model_id == model_id,
                                         t.StageHolding.stage == stage)
            .order_by(t.StageHolding.since)).scalars())

    def holdings_of_version(self, version_id: int) -> list[t.StageHolding]:
        return list(self._session.execute(
            select(t.StageHolding).where(t.StageHolding.version_id == version_id)
            .order_by(t.StageHolding.id)).scalars())

    def stages_of(self, version_id: int) -> list[str]:
        return [holding.stage for holding in self.holdings_of_version(version_id)]

    def stages_of_versions(self, version_ids: Iterable[int]) -> dict[int, list[str]]:
        """The stages each of the given versions holds, by version id, in stage-name order."""
        held: dict[int, list[str]] = {}
        for chunk in id_chunks(version_ids):
            for version_id, stage in self._session.execute(
                    select(t.StageHolding.version_id, t.StageHolding.stage)
                    .where(t.StageHolding.version_id.in_(chunk)).order_by(t.StageHolding.stage)):
                held.setdefault(version_id, []).append(stage)
        return held

    def hold(self, *, model_id: int, version_id: int, stage: str, is_exclusive: bool,
             since: datetime, report_id: int | None = None,
             previous_version_id: int | None = None) -> None:
        self._session.add(t.StageHolding(model_id=model_id, version_id=version_id, stage=stage,
                                         is_exclusive=is_exclusive, since=since,
                                         report_id=report_id,
                                         previous_version_id=previous_version_id))
        self._session.flush()

    def release(self, holding: t.StageHolding) -> None:
        """End one holding (row by row, so the unit of work digests each deleted row)."""
        self._session.delete(holding)
        self._session.flush()

    # --- events: the timeline of moves ---

    def add_event(self, *, model_id: int, version_id: int, stage: str, event: str,
                  details_json: str, report_id: int | None, at: datetime, by: str) -> None:
        self._session.add(t.StageEvent(model_id=model_id, version_id=version_id, stage=stage,
                                       event=event, details_json=details_json,
                                       report_id=report_id, created_at=at, created_by=by))

    def events_of_model(self, model_id: int) -> list[tuple[t.StageEvent, int]]:
        """(event, version number) of every stage event of a model, oldest first."""
        return [(event, number) for event, number in self._session.execute(
            select(t.StageEvent, t.Version.number)
            .join(t.Version, t.Version.id == t.StageEvent.version_id)
            .where(t.StageEvent.model_id == model_id).order_by(t.StageEvent.id))]

    def events_of_versions(self, version_ids: Iterable[int]) -> list[t.StageEvent]:
        """Every stage event of the given versions, oldest first within each chunk of ids."""
        return [row for chunk in id_chunks(version_ids) for row in self._session.execute(
            select(t.StageEvent).where(t.StageEvent.version_id.in_(chunk))
            .order_by(t.StageEvent.id)).scalars()]

    def replacements(self, model_id: int, stage: str) -> list[t.StageEvent]:
        """The `replaced` events of a stage, newest first."""
        return list(self._session.execute(
            select(t.StageEvent).where(t.StageEvent.model_id == model_id,
                                       t.StageEvent.stage == stage,
                                       t.StageEvent.event == "replaced")
            .order_by(t.StageEvent.id.desc())).scalars())

    def versions_that_entered(self, model_id: int, stage: str) -> list[int]:
        """The ids of every version that ever entered (or was restored to) a stage."""
        return sorted(set(self._session.execute(
            select(t.StageEvent.version_id).where(
                t.StageEvent.model_id == model_id, t.StageEvent.stage == stage,
                t.StageEvent.event.in_(("entered", "restored")))).scalars()))

    # --- gate reports: every attempt ---

    def add_report(self, *, model_id: int, version_id: int, stage: str, attempt: str,
                   passed: bool, report_json: str, at: datetime, by: str) -> int:
        row = t.GateReportRow(model_id=model_id, version_id=version_id, stage=stage,
                              attempt=attempt, passed=passed, report_json=report_json,
                              created_at=at, created_by=by)
        self._session.add(row)
        self._session.flush()
        return row.id

    def report(self, report_id: int) -> t.GateReportRow | None:
        return self._session.get(t.GateReportRow, report_id)

    def reports_of_model(self, model_id: int) -> list[tuple[t.GateReportRow, int]]:
        """(report, version number) of every attempt on a model, oldest first."""
        return [(row, number) for row, number in self._session.execute(
            select(t.GateReportRow, t.Version.number)
            .join(t.Version, t.Version.id == t.GateReportRow.version_id)
            .where(t.GateReportRow.model_id == model_id)
            .order_by(t.GateReportRow.id))]

    # --- approvals ---

    def approvals(self, version_id: int, stage: str | None = None) -> list[t.Approval]:
        """A version's approvals (for one stage, or all), oldest first."""
        query = select(t.Approval).where(t.Approval.version_id == version_id)
        if stage is not None:
            query = query.where(t.Approval.stage == stage)
        return list(self._session.execute(query.order_by(t.Approval.id)).scalars())

    def approval(self, version_id: int, stage: str, approver: str) -> t.Approval | None:
        return self._session.execute(select(t.Approval).where(
            t.Approval.version_id == version_id, t.Approval.stage == stage,
            t.Approval.approver == approver)).scalar_one_or_none()

    def approve(self, *, version_id: int, stage: str, approver: str, note: str,
                at: datetime) -> None:
        self._session.add(t.Approval(version_id=version_id, stage=stage, approver=approver,
                                     note=note, created_at=at))
        self._session.flush()
