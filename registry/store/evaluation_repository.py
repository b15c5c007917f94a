"""Evaluations: a version's metrics on one evaluation dataset, never changed once stored."""

from __future__ import annotations

from sqlalchemy import select
from sqlalchemy.orm import Session

from registry.store import tables as t


class EvaluationRepository:
    def __init__(self, session: Session) -> None:
        self._session = session

    def add(self, row: t.Evaluation) -> t.Evaluation:
        self._session.add(row)
        self._session.flush()
        return row

    def find(self, version_id: int, dataset_id: int) -> t.Evaluation | None:
        return self._session.execute(select(t.Evaluation).where(
            t.Evaluation.version_id == version_id, t.Evaluation.dataset_id == dataset_id)
        ).scalar_one_or_none()

    def of_version(self, version_id: int) -> list[tuple[t.Evaluation, t.Dataset]]:
        """Every evaluation of a version with its dataset, oldest first."""
        return [(evaluation, dataset) for evaluation, dataset in self._session.execute(
            select(t.Evaluation, t.Dataset).join(t.Dataset, t.Dataset.id == t.Evaluation.dataset_id)
            .where(t.Evaluation.version_id == version_id).order_by(t.Evaluation.id))]

    def every_one(self) -> list[tuple[t.Evaluation, str]]:
        """Every evaluation with the subject its audit event names (model/M/version/N/evaluation/D),
        in that order."""
        rows = self._session.execute(
            select(t.Evaluation, t.Model.name, t.Version.number, t.Dataset.name)
            .join(t.Version, t.Version.id == t.Evaluation.version_id)
            .join(t.Model, t.Model.id == t.Version.model_id)
            .join(t.Dataset, t.Dataset.id == t.Evaluation.dataset_id)
            .order_by(t.Model.name, t.Version.number, t.Dataset.name))
        return [(evaluation, f"model/{model}/version/{number}/evaluation/{dataset}")
                for evaluation, model, number, dataset in rows]
