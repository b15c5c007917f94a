"""Release statements and the rows a statement quotes (approvals), read and written inside the
unit of work's transaction."""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime

from sqlalchemy import select
from sqlalchemy.orm import Session

from registry.store import tables as t


@dataclass(frozen=True)
class StoredRelease:
    """One stored statement with the names it concerns."""

    id: int
    model: str
    version: int
    stage: str
    move: str
    envelope_json: str
    envelope_digest: str
    key_id: str | None
    audit_sequence: int
    created_at: datetime


def _stored(row: t.ReleaseStatementRow, model: str, number: int) -> StoredRelease:
    return StoredRelease(id=row.id, model=model, version=number, stage=row.stage, move=row.move,
                         envelope_json=row.envelope_json, envelope_digest=row.envelope_digest,
                         key_id=row.key_id, audit_sequence=row.audit_sequence,
                         created_at=row.created_at)


class ReleaseRepository:
    def __init__(self, session: Session) -> None:
        self._session = session

    def add(self, *, model_id: int, version_id: int, stage: str, move: str, envelope_json: str,
            envelope_digest: str, key_id: str | None, audit_sequence: int,
            at: datetime) -> None:
        self._session.add(t.ReleaseStatementRow(
            model_id=model_id, version_id=version_id, stage=stage, move=move,
            envelope_json=envelope_json, envelope_digest=envelope_digest, key_id=key_id,
            audit_sequence=audit_sequence, created_at=at))
        self._session.flush()

    def approvals(self, version_id: int, stage: str) -> list[tuple[str, str]]:
        """(approver, note) of every approval of a version for a stage, oldest first."""
        return [(row.approver, row.note) for row in self._session.execute(
            select(t.Approval).where(t.Approval.version_id == version_id,
                                     t.Approval.stage == stage)
            .order_by(t.Approval.id)).scalars()]

    def current(self, model_name: str, stage: str) -> StoredRelease | None:
        """The newest `entered` statement of the version holding the stage now, or None when
        nobody holds it or its holder entered without a statement."""
        row = self._session.execute(
            select(t.ReleaseStatementRow, t.Version.number)
            .join(t.Model, t.Model.id == t.ReleaseStatementRow.model_id)
            .join(t.Version, t.Version.id == t.ReleaseStatementRow.version_id)
            .join(t.StageHolding, (t.StageHolding.model_id == t.ReleaseStatementRow.model_id)
                  & (t.StageHolding.stage == t.ReleaseStatementRow.stage)
                  & (t.StageHolding.version_id == t.ReleaseStatementRow.version_id))
            .where(t.Model.name == model_name, t.ReleaseStatementRow.stage == stage,
                   t.ReleaseStatementRow.move == "entered")
            .order_by(t.ReleaseStatementRow.id.desc()).limit(1)).first()
        return None if row is None else _stored(row[0], model_name, row[1])

    def of_version(self, model_name: str, number: int) -> list[StoredRelease]:
        """Every statement about one version, oldest first."""
        return [_stored(row, model_name, number) for row in self._session.execute(
            select(t.ReleaseStatementRow)
            .join(t.Version, t.Version.id == t.ReleaseStatementRow.version_id)
            .join(t.Model, t.Model.id == t.Version.model_id)
            .where(t.Model.name == model_name, t.Version.number == number)
            .order_by(t.ReleaseStatementRow.id)).scalars()]

    def by_digest(self, model_name: str, envelope_digest: str) -> StoredRelease | None:
        row = self._session.execute(
            select(t.ReleaseStatementRow, t.Version.number)
            .join(t.Model, t.Model.id == t.ReleaseStatementRow.model_id)
            .join(t.Version, t.Version.id == t.ReleaseStatementRow.version_id)
            .where(t.Model.name == model_name,
                   t.ReleaseStatementRow.envelope_digest == envelope_digest)).first()
        return None if row is None else _stored(row[0], model_name, row[1])
