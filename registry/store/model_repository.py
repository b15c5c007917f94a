"""Models and their versions: the rows a use case finds by name and number."""

from __future__ import annotations

from sqlalchemy import func, select
from sqlalchemy.orm import Session

from registry.store import tables as t


class ModelRepository:
    def __init__(self, session: Session) -> None:
        self._session = session

    def named(self, name: str) -> t.Model | None:
        return self._session.execute(
            select(t.Model).where(t.Model.name == name)).scalar_one_or_none()

    def by_id(self, model_id: int) -> t.Model:
        return self._session.get_one(t.Model, model_id)

    def all(self) -> list[t.Model]:
        return list(self._session.execute(select(t.Model).order_by(t.Model.name)).scalars())

    def add(self, model: t.Model) -> None:
        self._session.add(model)
        self._session.flush()

    def version(self, model_id: int, number: int) -> t.Version | None:
        return self._session.execute(
            select(t.Version).where(t.Version.model_id == model_id, t.Version.number == number)
        ).scalar_one_or_none()

    def version_by_id(self, version_id: int) -> t.Version:
        return self._session.get_one(t.Version, version_id)

    def versions(self, model_id: int) -> list[t.Version]:
        return list(self._session.execute(
            select(t.Version).where(t.Version.model_id == model_id).order_by(t.Version.number)
        ).scalars())

    def version_count(self, model_id: int) -> int:
        return self._session.execute(
            select(func.count()).select_from(t.Version).where(t.Version.model_id == model_id)
        ).scalar_one()

    def held_stages(self, model_id: int) -> list[tuple[int, str]]:
        """(version number, stage) of every stage the model's versions hold, oldest first."""
        return [(number, stage) for number, stage in self._session.execute(
            select(t.Version.number, t.StageHolding.stage)
            .join(t.StageHolding, t.StageHolding.version_id == t.Version.id)
            .where(t.StageHolding.model_id == model_id)
            .order_by(t.StageHolding.since))]
