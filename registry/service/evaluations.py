"""Evaluations: the catalogue computes a version's metrics on a registered evaluation dataset
from its predictions, and keeps the per-row predictions for later paired comparisons."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from registry.canonical_json import sha256_hex
from registry.errors import AlreadyExists, UserError
from registry.evaluation import Predictions
from registry.evaluation.record import EvaluationRecord, evaluation_record, read_evaluation_record
from registry.service.actors import Actor
from registry.service.authorisation import authorise
from registry.service.datasets import find_dataset, load_fingerprint
from registry.service.models import find_model, find_version
from registry.store import tables as t
from registry.store.catalogue import Catalogue
from registry.store.unit_of_work import UnitOfWork, utc_now


@dataclass(frozen=True)
class EvaluationRequest:
    model: str
    version: int
    dataset: str
    predictions: Predictions
    slice_columns: tuple[str, ...] = ()
    threshold: float = 0.5


@dataclass(frozen=True)
class EvaluationSummary:
    model: str
    version: int
    dataset: str
    dataset_content_digest: str
    task: str
    n: int
    metrics: dict[str, Any]
    slices: dict[str, Any] = field(default_factory=dict)
    calibration: list[dict[str, Any]] = field(default_factory=list)
    created: bool = True


def metrics_document(predictions: Predictions, slice_columns: tuple[str, ...],
                     threshold: float) -> EvaluationRecord:
    """What the catalogue stores of an evaluation besides the per-row predictions."""
    for column in slice_columns:
        if column not in predictions.extra_columns:
            raise UserError(f"the predictions have no column {column!r} to slice by; extra "
                            f"columns are {', '.join(sorted(predictions.extra_columns)) or 'none'}",
                            place="--slice")
    return evaluation_record(predictions, slice_columns, threshold)


def _key_digest(predictions: Predictions) -> str:
    from registry.datasets import key_set_digest

    return key_set_digest(predictions.row_ids)


def add_evaluation(catalogue: Catalogue, request: EvaluationRequest,
                   actor: Actor) -> EvaluationSummary:
    document = metrics_document(request.predictions, request.slice_columns, request.threshold)
    stored_predictions = request.predictions.to_bytes()
    with UnitOfWork(catalogue) as uow:
        authorise(uow, actor, "evaluation.add")
        line = find_model(uow, request.model)
        version = find_version(uow, line, request.version)
        dataset = find_dataset(uow, request.dataset)
        if dataset.role != "evaluation":
            raise UserError(f"{dataset.name} is registered as a {dataset.role} dataset; "
                            "evaluate on a dataset registered with --role evaluation",
                            place="--dataset")
        fingerprint = load_fingerprint(uow, dataset)
        if fingerprint.key_digest is None:
            raise UserError(f"{dataset.name} was registered without --key, so its row ids "
                            "cannot be checked", place="--dataset")
        if _key_digest(request.predictions) != fingerprint.key_digest:
            raise UserError(f"the predictions' row ids are not the key set of {dataset.name} "
                            f"({len(request.predictions)} predictions, {dataset.rows} dataset "
                            "rows): predict every row of the dataset, each once",
                            place="--predictions")
        predictions_digest = uow.blobs.put(stored_predictions)
        existing = uow.evaluations.find(version.id, dataset.id)
        if existing is not None:
            if existing.predictions_digest == predictions_digest:
                return _summary(line, version, dataset, existing, created=False)
            raise AlreadyExists(f"{line.name} v{version.number} already has an evaluation on "
                                f"{dataset.name} from other predictions; evaluations never "
                                "change", place="--dataset")
        metrics_json = document.to_json()
        evaluation = t.Evaluation(
            version_id=version.id, dataset_id=dataset.id,
            dataset_content_digest=dataset.content_digest, task=request.predictions.task,
            metrics_json=metrics_json,
            predictions_digest=predictions_digest, created_at=utc_now(), created_by=actor.name)
        uow.evaluations.add(evaluation)
        uow.audit.append(actor.name, "evaluation.add",
                         f"model/{line.name}/version/{version.number}/evaluation/{dataset.name}",
                         {"dataset_content_digest": dataset.content_digest,
                          "predictions_digest": predictions_digest,
                          # So `audit verify` can find any change to the stored metrics.
                          "metrics_digest": sha256_hex(metrics_json.encode("utf-8")),
                          "metrics": document.metrics})
        summary = _summary(line, version, dataset, evaluation)
        uow.commit()
        return summary


def _summary(line: t.Model, version: t.Version, dataset: t.Dataset, evaluation: t.Evaluation,
             *, created: bool = True) -> EvaluationSummary:
    record = read_evaluation_record(evaluation.metrics_json)
    return EvaluationSummary(
        model=line.name, version=version.number, dataset=dataset.name,
        dataset_content_digest=evaluation.dataset_content_digest, task=evaluation.task,
        n=record.n, metrics=record.metrics, slices=record.slices,
        calibration=record.calibration, created=created)


def evaluations_of(uow: UnitOfWork, version: t.Version) -> list[tuple[t.Evaluation, t.Dataset]]:
    return uow.evaluations.of_version(version.id)


def stored_predictions(uow: UnitOfWork, evaluation: t.Evaluation) -> Predictions:
    return Predictions.from_bytes(uow.blobs.get(evaluation.predictions_digest))


def list_evaluations(catalogue: Catalogue, model: str, number: int) -> list[EvaluationSummary]:
    with UnitOfWork(catalogue, write=False) as uow:
        line = find_model(uow, model)
        version = find_version(uow, line, number)
        return [_summary(line, version, dataset, evaluation)
                for evaluation, dataset in evaluations_of(uow, version)]
