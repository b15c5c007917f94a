"""Registered datasets, their derived-from edges and the versions' links to them."""

from __future__ import annotations

from collections.abc import Sequence
from datetime import datetime

from sqlalchemy import select
from sqlalchemy.orm import Session

from registry.store import tables as t


class DatasetRepository:
    def __init__(self, session: Session) -> None:
        self._session = session

    def named(self, name: str) -> t.Dataset | None:
        return self._session.execute(
            select(t.Dataset).where(t.Dataset.name == name)).scalar_one_or_none()

    def by_id(self, dataset_id: int) -> t.Dataset:
        return self._session.get_one(t.Dataset, dataset_id)

    def all(self) -> list[t.Dataset]:
        return list(self._session.execute(select(t.Dataset).order_by(t.Dataset.name)).scalars())

    def add(self, dataset: t.Dataset, parents: Sequence[t.Dataset]) -> None:
        """Store a dataset and its derived-from edges."""
        self._session.add(dataset)
        self._session.flush()
        for parent in parents:
            self._session.add(t.DatasetParent(child_id=dataset.id, parent_id=parent.id))
        self._session.flush()

    def parent_names(self, dataset_id: int) -> list[str]:
        return sorted(self._session.execute(
            select(t.Dataset.name).join(t.DatasetParent, t.DatasetParent.parent_id == t.Dataset.id)
            .where(t.DatasetParent.child_id == dataset_id)).scalars())

    def linked_to_version(self, version_id: int) -> list[tuple[str, t.Dataset]]:
        """(relation, dataset) of every dataset a version was trained or evaluated on."""
        return [(relation, dataset) for relation, dataset in self._session.execute(
            select(t.VersionDataset.relation, t.Dataset)
            .join(t.Dataset, t.Dataset.id == t.VersionDataset.dataset_id)
            .where(t.VersionDataset.version_id == version_id)
            .order_by(t.VersionDataset.relation, t.Dataset.name))]

    def newest_live_sample(self, model_id: int) -> t.Dataset | None:
        """The newest live sample registered as taken from a model's feed."""
        return self._session.execute(
            select(t.Dataset).where(t.Dataset.feed_model_id == model_id,
                                    t.Dataset.role == "live-sample")
            .order_by(t.Dataset.created_at.desc(), t.Dataset.id.desc())).scalars().first()

    def recall(self, dataset: t.Dataset, *, at: datetime, reason: str, by: str) -> None:
        dataset.recalled_at, dataset.recall_reason, dataset.recalled_by = at, reason, by
        self._session.flush()
