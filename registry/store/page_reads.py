"""The reads behind the browser's pages: rows for registry.service.queries, which shapes them.

Every method is one or two indexed queries; none writes. Hung on the unit of work as
`uow.pages`, so the page queries run inside one read-only transaction and see one state.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass

from sqlalchemy import func, or_, select
from sqlalchemy.orm import Session

from registry.node_ids import dataset_id, model_id
from registry.store import lineage as walks
from registry.store import tables as t
from registry.store.blob_store import BlobStore


@dataclass(frozen=True)
class EventFilter:
    """Which audit events a list shows; empty fields do not filter."""

    model: str = ""
    dataset: str = ""
    person: str = ""
    action: str = ""


class PageReads:
    def __init__(self, session: Session) -> None:
        self._session = session

    # --- models and versions -----------------------------------------------------------------

    def version_counts(self) -> dict[int, int]:
        return dict(self._session.execute(
            select(t.Version.model_id, func.count()).group_by(t.Version.model_id)).all())

    def holdings(self, model_id: int | None = None) -> list[tuple[t.StageHolding, int]]:
        """Who holds which stage now, with the holder's version number, oldest first."""
        query = (select(t.StageHolding, t.Version.number)
                 .join(t.Version, t.Version.id == t.StageHolding.version_id)
                 .order_by(t.StageHolding.since, t.StageHolding.id))
        if model_id is not None:
            query = query.where(t.StageHolding.model_id == model_id)
        return [(holding, number) for holding, number in self._session.execute(query)]

    def stage_events(self, model_id: int) -> list[tuple[t.StageEvent, int]]:
        return [(event, number) for event, number in self._session.execute(
            select(t.StageEvent, t.Version.number)
            .join(t.Version, t.Version.id == t.StageEvent.version_id)
            .where(t.StageEvent.model_id == model_id)
            .order_by(t.StageEvent.created_at, t.StageEvent.id))]

    def gate_reports(self, model_id: int, version_id: int | None = None
                     ) -> list[tuple[t.GateReportRow, int]]:
        """Every gate report of a model (or of one version), newest first."""
        query = (select(t.GateReportRow, t.Version.number)
                 .join(t.Version, t.Version.id == t.GateReportRow.version_id)
                 .where(t.GateReportRow.model_id == model_id)
                 .order_by(t.GateReportRow.created_at.desc(), t.GateReportRow.id.desc()))
        if version_id is not None:
            query = query.where(t.GateReportRow.version_id == version_id)
        return [(row, number) for row, number in self._session.execute(query)]

    def approvals(self, version_ids: Sequence[int]) -> list[t.Approval]:
        if not version_ids:
            return []
        return list(self._session.execute(
            select(t.Approval).where(t.Approval.version_id.in_(list(version_ids)))
            .order_by(t.Approval.created_at, t.Approval.id)).scalars())

    def evaluations(self, version_id: int) -> list[tuple[t.Evaluation, str]]:
        return [(row, name) for row, name in self._session.execute(
            select(t.Evaluation, t.Dataset.name)
            .join(t.Dataset, t.Dataset.id == t.Evaluation.dataset_id)
            .where(t.Evaluation.version_id == version_id).order_by(t.Dataset.name))]

    # --- datasets ------------------------------------------------------------------------------

    def dataset_names(self, ids: Iterable[int]) -> dict[int, str]:
        found: dict[int, str] = {}
        for chunk in walks.id_chunks(ids):
            found.update(self._session.execute(
                select(t.Dataset.id, t.Dataset.name).where(t.Dataset.id.in_(chunk))).all())
        return found

    def children(self, dataset_id: int) -> list[str]:
        return list(self._session.execute(
            select(t.Dataset.name).join(t.DatasetParent, t.DatasetParent.child_id == t.Dataset.id)
            .where(t.DatasetParent.parent_id == dataset_id).order_by(t.Dataset.name)).scalars())

    def versions_using(self, dataset_id: int) -> list[tuple[str, int, str]]:
        """(model, version number, relation) of every version linked to a dataset directly."""
        return [(m, n, r) for m, n, r in self._session.execute(
            select(t.Model.name, t.Version.number, t.VersionDataset.relation)
            .join(t.Version, t.Version.id == t.VersionDataset.version_id)
            .join(t.Model, t.Model.id == t.Version.model_id)
            .where(t.VersionDataset.dataset_id == dataset_id)
            .order_by(t.Model.name, t.Version.number, t.VersionDataset.relation))]

    def recalled_upstream_datasets(self, dataset_id: int) -> list[str]:
        """Names of recalled datasets this one was derived from, however far up."""
        up = walks.walk(self._session, walks.seeds_for(walks.NodeKey("dataset", dataset_id)), "up")
        ids = [r.key.ref for r in up if r.key.kind == "dataset" and r.key.ref != dataset_id]
        names: list[str] = []
        for chunk in walks.id_chunks(ids):
            names += self._session.execute(
                select(t.Dataset.name).where(t.Dataset.id.in_(chunk),
                                             t.Dataset.recalled_at.is_not(None))).scalars()
        return sorted(names)

    def blob(self, digest: str) -> bytes | None:
        return BlobStore(self._session).find(digest)

    # --- the audit log -------------------------------------------------------------------------

    def audit_events(self, chosen: EventFilter, offset: int, limit: int
                     ) -> tuple[list[t.AuditEvent], int]:
        """One page of events, newest first, and how many match in all."""
        query = select(t.AuditEvent)
        if chosen.model:
            query = query.where(or_(t.AuditEvent.subject == model_id(chosen.model),
                                    t.AuditEvent.subject.startswith(model_id(chosen.model) + "/",
                                                                    autoescape=True)))
        if chosen.dataset:
            query = query.where(or_(t.AuditEvent.subject == dataset_id(chosen.dataset),
                                    t.AuditEvent.subject.endswith(f"/evaluation/{chosen.dataset}",
                                                                  autoescape=True)))
        if chosen.person:
            query = query.where(t.AuditEvent.actor == chosen.person)
        if chosen.action:
            query = query.where(t.AuditEvent.action == chosen.action)
        total = self._session.execute(
            select(func.count()).select_from(query.subquery())).scalar_one()
        rows = list(self._session.execute(
            query.order_by(t.AuditEvent.sequence.desc()).offset(offset).limit(limit)).scalars())
        return rows, total

    def audit_people(self) -> list[str]:
        return list(self._session.execute(
            select(t.AuditEvent.actor).distinct().order_by(t.AuditEvent.actor)).scalars())

    def audit_actions(self) -> list[str]:
        return list(self._session.execute(
            select(t.AuditEvent.action).distinct().order_by(t.AuditEvent.action)).scalars())
