"""Stored documents: which blob holds a version's document (its bytes are read through
registry/store/blob_store.py, a piece at a time)."""

from __future__ import annotations

from dataclasses import dataclass

from sqlalchemy import select
from sqlalchemy.orm import Session

from registry.store import tables as t


@dataclass(frozen=True)
class DocumentRef:
    """Where a version's document is: its blob (the SHA-256 of the bytes as registered)."""

    model: str
    version: int
    blob_digest: str
    size: int
    kind: str


class DocumentRepository:
    def __init__(self, session: Session) -> None:
        self._session = session

    def _query(self):
        return (select(t.Model.name, t.Version.number, t.Version.stored_blob_digest,
                       t.Blob.size, t.Version.document_kind)
                .join(t.Version, t.Version.model_id == t.Model.id)
                .join(t.Blob, t.Blob.digest == t.Version.stored_blob_digest))

    def of_version(self, model_name: str, number: int) -> DocumentRef | None:
        row = self._session.execute(self._query().where(
            t.Model.name == model_name, t.Version.number == number)).first()
        return None if row is None else DocumentRef(*row)

    def of_stage(self, model_name: str, stage: str) -> DocumentRef | None:
        """The document of the newest holder of the stage (the one the stage lookup names)."""
        row = self._session.execute(
            self._query().join(t.StageHolding, t.StageHolding.version_id == t.Version.id)
            .where(t.Model.name == model_name, t.StageHolding.stage == stage)
            .order_by(t.StageHolding.since.desc(), t.StageHolding.id.desc()).limit(1)).first()
        return None if row is None else DocumentRef(*row)
