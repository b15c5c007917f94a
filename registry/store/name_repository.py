"""The names that exist, for telling a person what they may have meant."""

from __future__ import annotations

from sqlalchemy import select
from sqlalchemy.orm import Session

from registry.store import tables as t


class NameRepository:
    def __init__(self, session: Session) -> None:
        self._session = session

    def models(self) -> list[str]:
        return list(self._session.execute(select(t.Model.name).order_by(t.Model.name)).scalars())

    def datasets(self) -> list[str]:
        return list(self._session.execute(
            select(t.Dataset.name).order_by(t.Dataset.name)).scalars())

    def version_numbers(self, model_id: int) -> list[int]:
        return list(self._session.execute(
            select(t.Version.number).where(t.Version.model_id == model_id)
            .order_by(t.Version.number)).scalars())
