"""The signed checkpoints stored in the catalogue, newest last."""

from __future__ import annotations

from sqlalchemy import select
from sqlalchemy.orm import Session

from registry.signing.checkpoints import SignedCheckpoint
from registry.store import tables as t


def _signed(row: t.Checkpoint) -> SignedCheckpoint:
    return SignedCheckpoint(row.sequence, row.head_hash, row.signed_at, row.key_id,
                            row.signature)


class CheckpointRepository:
    def __init__(self, session: Session) -> None:
        self._session = session

    def add(self, checkpoint: SignedCheckpoint) -> None:
        self._session.add(t.Checkpoint(
            sequence=checkpoint.sequence, head_hash=checkpoint.head_hash,
            signed_at=checkpoint.signed_at, key_id=checkpoint.key_id,
            signature=checkpoint.signature))
        self._session.flush()

    def newest(self) -> SignedCheckpoint | None:
        row = self._session.execute(
            select(t.Checkpoint).order_by(t.Checkpoint.sequence.desc(), t.Checkpoint.id.desc())
            .limit(1)).scalar_one_or_none()
        return _signed(row) if row is not None else None

    def all(self) -> list[tuple[int, SignedCheckpoint]]:
        """Every checkpoint with its row id, oldest first."""
        return [(row.id, _signed(row)) for row in self._session.execute(
            select(t.Checkpoint).order_by(t.Checkpoint.sequence, t.Checkpoint.id)).scalars()]
