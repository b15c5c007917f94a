"""The whole-catalogue reads `audit verify` recomputes digests from, each in a stable order."""

from __future__ import annotations

from sqlalchemy import select
from sqlalchemy.orm import Session

from registry.store import tables as t


class IntegrityReads:
    def __init__(self, session: Session) -> None:
        self._session = session

    def version_links(self) -> list[tuple[int, str, str]]:
        """(version id, relation, dataset name) of every version's link to a dataset."""
        return [(version_id, relation, name) for version_id, relation, name in
                self._session.execute(
                    select(t.VersionDataset.version_id, t.VersionDataset.relation, t.Dataset.name)
                    .join(t.Dataset, t.Dataset.id == t.VersionDataset.dataset_id))]

    def versions(self) -> list[tuple[t.Version, str]]:
        """(version, model name) of every version, by model name and number."""
        return [(version, name) for version, name in self._session.execute(
            select(t.Version, t.Model.name).join(t.Model, t.Model.id == t.Version.model_id)
            .order_by(t.Model.name, t.Version.number))]

    def evaluations(self) -> list[tuple[t.Evaluation, str, int, str]]:
        """(evaluation, model name, version number, dataset name) of every evaluation."""
        return [(evaluation, model, number, dataset) for evaluation, model, number, dataset in
                self._session.execute(
                    select(t.Evaluation, t.Model.name, t.Version.number, t.Dataset.name)
                    .join(t.Version, t.Version.id == t.Evaluation.version_id)
                    .join(t.Model, t.Model.id == t.Version.model_id)
                    .join(t.Dataset, t.Dataset.id == t.Evaluation.dataset_id)
                    .order_by(t.Model.name, t.Version.number, t.Dataset.name))]
