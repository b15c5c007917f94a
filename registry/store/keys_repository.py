"""The public signing keys the catalogue has had: the newest unretired one is current."""

from __future__ import annotations

from datetime import datetime

from sqlalchemy import select
from sqlalchemy.orm import Session

from registry.store import tables as t


class KeyRepository:
    def __init__(self, session: Session) -> None:
        self._session = session

    def current(self) -> t.SigningKeyRow | None:
        return self._session.execute(
            select(t.SigningKeyRow).where(t.SigningKeyRow.retired_at.is_(None))
            .order_by(t.SigningKeyRow.id.desc()).limit(1)).scalar_one_or_none()

    def all(self) -> list[t.SigningKeyRow]:
        return list(self._session.execute(
            select(t.SigningKeyRow).order_by(t.SigningKeyRow.id)).scalars())

    def get(self, key_id: str) -> t.SigningKeyRow | None:
        return self._session.execute(
            select(t.SigningKeyRow).where(t.SigningKeyRow.key_id == key_id)
        ).scalar_one_or_none()

    def add(self, key_id: str, public_key_pem: str, at: datetime,
            algorithm: str = "ed25519") -> t.SigningKeyRow:
        row = t.SigningKeyRow(key_id=key_id, algorithm=algorithm, public_key_pem=public_key_pem,
                              created_at=at)
        self._session.add(row)
        self._session.flush()
        return row

    def retire(self, key_id: str, at: datetime) -> None:
        row = self.get(key_id)
        if row is not None and row.retired_at is None:
            row.retired_at = at
            self._session.flush()
