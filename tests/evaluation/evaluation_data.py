"""Simulated predictions for the evaluation tests (generated, seeded; no real data)."""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np

from registry.evaluation import Predictions

DISTRICTS = ("NORTHGATE", "RIVERSIDE", "OLD_TOWN", "HILLCREST", "SALTMARSH")


def row_ids(count: int) -> np.ndarray:
    return np.asarray([f"S-{k:06d}" for k in range(count)])


def binary_scores(rng: np.random.Generator, labels: np.ndarray, noise: float,
                  decimals: int | None = None) -> np.ndarray:
    """Probabilities that separate the classes more the smaller the noise; rounding makes ties."""
    logits = (2.0 * labels - 1.0) + rng.normal(0.0, noise, labels.shape[0])
    scores = 1.0 / (1.0 + np.exp(-logits))
    return np.round(scores, decimals) if decimals is not None else scores


def binary_pair(seed: int, count: int, *, decimals: int | None = None,
                prevalence: float = 0.4) -> tuple[Predictions, Predictions]:
    rng = np.random.default_rng(seed)
    labels = (rng.random(count) < prevalence).astype(np.int8)
    ids = row_ids(count)
    district = np.asarray(DISTRICTS)[rng.integers(0, len(DISTRICTS), count)]
    make = lambda noise: Predictions(  # noqa: E731
        "binary", ids, labels, binary_scores(rng, labels, noise, decimals), ("0", "1"),
        {"district": district})
    return make(1.0), make(1.4)


def regression_pair(seed: int, count: int) -> tuple[Predictions, Predictions]:
    rng = np.random.default_rng(seed)
    truth = rng.gamma(2.0, 150.0, count)
    ids = row_ids(count)
    make = lambda noise: Predictions(  # noqa: E731
        "regression", ids, truth, truth + rng.normal(0.0, noise, count), (), {})
    return make(40.0), make(55.0)


def multiclass_pair(seed: int, count: int, classes: tuple[str, ...] = ("LOW", "MODERATE", "HIGH")
                    ) -> tuple[Predictions, Predictions]:
    rng = np.random.default_rng(seed)
    labels = rng.integers(0, len(classes), count)
    ids = row_ids(count)

    def make(noise: float) -> Predictions:
        logits = 1.5 * np.eye(len(classes))[labels] + rng.normal(0.0, noise, (count, len(classes)))
        probabilities = np.exp(logits) / np.exp(logits).sum(axis=1, keepdims=True)
        return Predictions("multiclass", ids, labels, probabilities, classes, {})

    return make(1.0), make(1.3)


def write_csv(path: Path, header: list[str], rows: list[list[object]]) -> Path:
    with path.open("w", newline="") as handle:
        writer = csv.writer(handle)
        writer.writerow(header)
        writer.writerows(rows)
    return path


def write_predictions_csv(path: Path, predictions: Predictions) -> Path:
    columns = predictions.to_columns()
    columns.pop("task")
    header = list(columns)
    return write_csv(path, header, [list(row) for row in zip(*columns.values())])
