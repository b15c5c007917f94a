"""The report after release: per window and version, rows served, input and prediction drift,
shadow agreement and live quality, and a state with its reasons.

Input drift is judged against the version's training dataset and prediction drift against its
evaluation predictions, with the datasets package's measures (PSI on the reference's deciles
with the 0.1 / 0.25 levels, two-sample KS for numbers, Jensen-Shannon for categories: Breck et
al., Data Validation for Machine Learning, MLSys 2019). The KS p-values come from the limit law
(Stephens' correction), which many windows can afford; the statistic itself is exact to a
bucket. The states follow Breck et al., The ML Test Score (2017), Monitoring tests 1-7: inputs
that drift are an alarm; live quality whose interval falls below the evaluation value by more
than the policy's margin is degrading.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pyarrow as pa

from registry.after_release.agreement import agreement, shared_rows
from registry.after_release.quality import live_quality
from registry.after_release.states import ReportSettings
from registry.after_release.summaries import WindowSummary, merge_summaries
from registry.datasets.drift import column_drift
from registry.datasets.profile import ColumnProfile
from registry.plain import to_plain


@dataclass(frozen=True)
class Reference:
    """What one version is compared with: its training profile (features only), the profile
    of its evaluation predictions and the evaluation's value of each metric."""

    version: int
    training_dataset: str | None
    training: Mapping[str, ColumnProfile]
    evaluation_dataset: str | None = None
    evaluation_predictions: Mapping[str, ColumnProfile] = field(default_factory=dict)
    evaluation_metrics: Mapping[str, float | None] = field(default_factory=dict)
    threshold: float = 0.5
    classes: tuple[str, ...] = ()


@dataclass(frozen=True)
class WindowRowsOf:
    """A version's compact rows in one report window: row hashes and predictions (a vector, or
    an (n, classes) matrix); labels where outcomes arrived (NaN where they did not)."""

    hashes: np.ndarray
    predictions: np.ndarray
    labels: np.ndarray | None = None


def merge_windows(windows: Sequence[tuple[int, int, WindowSummary]],
                  window_seconds: int) -> dict[tuple[int, int], WindowSummary]:
    """Stored windows merged into report windows: (version, report window start) -> summary."""
    merged: dict[tuple[int, int], WindowSummary] = {}
    for version, start, summary in windows:
        key = (version, start - start % window_seconds)
        merged[key] = merge_summaries(merged[key], summary) if key in merged else summary
    return merged


def input_drift(reference: Reference, summary: WindowSummary) -> dict[str, dict[str, Any]]:
    drift = {}
    for name, current in summary.inputs.items():
        expected = reference.training.get(name)
        if expected is None:
            continue
        found = column_drift(expected, current, exact_ks_cells=0)
        if found is not None:
            drift[name] = found.to_dict()
    return drift


def prediction_drift(reference: Reference, summary: WindowSummary) -> dict[str, dict[str, Any]]:
    drift = {}
    for name, current in summary.predictions.items():
        expected = reference.evaluation_predictions.get(name)
        found = (column_drift(expected, current, exact_ks_cells=0) if expected is not None
                 else None)
        if found is not None:
            drift[name] = found.to_dict()
    return drift


def window_figures(version: int, summary: WindowSummary, reference: Reference, task: str,
                   settings: ReportSettings, mine: WindowRowsOf | None,
                   theirs: WindowRowsOf | None, incumbent: int | None) -> dict[str, Any]:
    """Everything the report says of one version in one window except its state: rows, drift
    of inputs and predictions, agreement with the incumbent, live quality. The catalogue keeps
    these figures with the window, so a report need not recompute them."""
    figures: dict[str, Any] = {"version": version, "rows": summary.rows,
                               "input_drift": input_drift(reference, summary),
                               "prediction_drift": prediction_drift(reference, summary),
                               "training_dataset": reference.training_dataset,
                               "evaluation_dataset": reference.evaluation_dataset}
    if incumbent is not None and incumbent != version and mine is not None \
            and theirs is not None:
        in_mine, in_theirs = shared_rows(mine.hashes, theirs.hashes)
        figures["agreement"] = to_plain(agreement(
            incumbent, task, mine.predictions[in_mine], theirs.predictions[in_theirs],
            reference.threshold))
    if mine is not None and mine.labels is not None:
        known = ~np.isnan(mine.labels)
        if known.any():
            labels = mine.labels[known]
            labels = labels.astype(np.int64) if task != "regression" else labels
            quality = live_quality(task, labels, mine.predictions[known], reference.classes,
                                   settings.quality_metric, threshold=reference.threshold,
                                   confidence=settings.confidence)
            figures["quality"] = {
                **quality.to_dict(),
                "evaluation_value": reference.evaluation_metrics.get(settings.quality_metric)}
    return figures


def predictions_matrix(table: pa.Table, columns: Sequence[str]) -> np.ndarray:
    if len(columns) == 1:
        return table.column(columns[0]).to_numpy()
    return np.column_stack([table.column(c).to_numpy() for c in columns])
