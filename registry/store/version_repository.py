"""Versions as registration writes them: found by registration digest, numbered, linked to the
datasets their manifest names; and the stored shapes a conversion rewrites."""

from __future__ import annotations

from collections.abc import Iterable

from sqlalchemy import func, select
from sqlalchemy.orm import Session

from registry.store import tables as t


class VersionRepository:
    def __init__(self, session: Session) -> None:
        self._session = session

    def with_registration(self, model_id: int, registration_digest: str) -> t.Version | None:
        """The version of a model registered with exactly this content, if any."""
        return self._session.execute(
            select(t.Version).where(t.Version.model_id == model_id,
                                    t.Version.registration_digest == registration_digest)
        ).scalars().first()

    def last_number(self, model_id: int) -> int:
        """The highest version number of a model, 0 before its first version."""
        return self._session.execute(
            select(func.max(t.Version.number)).where(t.Version.model_id == model_id)
        ).scalar_one() or 0

    def add(self, version: t.Version, links: Iterable[tuple[str, t.Dataset]]) -> t.Version:
        """Store a version and its (relation, dataset) lineage links."""
        self._session.add(version)
        self._session.flush()
        for relation, dataset in links:
            self._session.add(t.VersionDataset(version_id=version.id, dataset_id=dataset.id,
                                               relation=relation))
        self._session.flush()
        return version

    def with_features(self) -> list[tuple[t.Version, str]]:
        """Every version that stores feature definitions, with its model's name, in order."""
        return [(version, name) for version, name in self._session.execute(
            select(t.Version, t.Model.name).join(t.Model, t.Model.id == t.Version.model_id)
            .where(t.Version.features_json.is_not(None))
            .order_by(t.Model.name, t.Version.number))]

    def lineage_names(self, version_id: int) -> dict[str, list[str]]:
        """relation -> the names of the datasets a version is linked to."""
        links: dict[str, list[str]] = {}
        for relation, name in self._session.execute(
                select(t.VersionDataset.relation, t.Dataset.name)
                .join(t.Dataset, t.Dataset.id == t.VersionDataset.dataset_id)
                .where(t.VersionDataset.version_id == version_id)):
            links.setdefault(relation, []).append(name)
        return links
