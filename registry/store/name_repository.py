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

    def model_name(self, model_id: int) -> str | None:
        model = self._session.get(t.Model, model_id)
        return model.name if model else None

    def version_number(self, version_id: int) -> int:
        return self._session.execute(
            select(t.Version.number).where(t.Version.id == version_id)).scalar_one()

    def recalled_upstream_of_version(self, version_id: int) -> list[str]:
        """The names of the recalled datasets anywhere upstream of a version."""
        from registry.store import lineage as walks

        start = walks.NodeKey("version", version_id)
        reached = {r.key for r in walks.walk(self._session, walks.seeds_for(start), "up")}
        facts = walks.facts_of(self._session, reached)
        return sorted(facts[k].name for k in reached if k.kind == "dataset" and facts[k].recalled)

    def version_numbers(self, model_id: int) -> list[int]:
        return list(self._session.execute(
            select(t.Version.number).where(t.Version.model_id == model_id)
            .order_by(t.Version.number)).scalars())
