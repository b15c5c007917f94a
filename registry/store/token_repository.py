"""Bearer tokens of the HTTP API: only the hash of each secret is ever stored."""

from __future__ import annotations

from sqlalchemy import select
from sqlalchemy.orm import Session

from registry.store import tables as t


class TokenRepository:
    def __init__(self, session: Session) -> None:
        self._session = session

    def add(self, row: t.ApiToken) -> t.ApiToken:
        self._session.add(row)
        self._session.flush()
        return row

    def get(self, token_id: int) -> t.ApiToken | None:
        return self._session.get(t.ApiToken, token_id)

    def by_hash(self, token_hash: str) -> t.ApiToken | None:
        return self._session.execute(
            select(t.ApiToken).where(t.ApiToken.token_hash == token_hash)).scalar_one_or_none()

    def all(self) -> list[t.ApiToken]:
        return list(self._session.execute(select(t.ApiToken).order_by(t.ApiToken.id)).scalars())

    def save(self) -> None:
        """Write changed rows now, inside the transaction (an update such as a revocation)."""
        self._session.flush()
