"""The report after release: per window and version, rows served, input and prediction drift,
shadow agreement and live quality, and a state with its reasons.

Input drift is judged against the version's training dataset and prediction drift against its
evaluation predictions, with the datasets package's measures (PSI on the reference's deciles
with the 0.1 / 0.25 levels, two-sample KS for numbers, Jensen-Shannon for categories: Breck et
al., Data Validation for Machine Learning, MLSys 2019). The KS p-values come from the limit law
(Stephens' correction), which many windows can afford; the statistic itself is exact to a bucket. The states follow Breck et al., The ML
Test Score (2017), Monitoring tests 1-7: inputs that drift are an alarm; live quality whose
interval falls below the evaluation value by more than the policy's margin is degrading.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pyarrow as pa

from registry.after_release.agreement import agreement, shared_rows
from registry.after_release.quality import LiveQuality, is_below, live_quality
from registry.after_release.summaries import WindowSummary, merge_summaries
from registry.after_release.windows import iso
from registry.datasets.drift import column_drift
from registry.datasets.profile import ColumnProfile

STEADY, DRIFTING, DEGRADING = "steady", "drifting", "degrading"
SEVERITY = {STEADY: 0, DRIFTING: 1, DEGRADING: 2}


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
class ReportSettings:
    window_seconds: int
    quality_metric: str
    quality_margin: float
    confidence: float = 0.95


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


def judge(drift: Mapping[str, Mapping[str, Any]], quality: LiveQuality | None,
          reference: Reference, settings: ReportSettings) -> tuple[str, list[str]]:
    """The state of one version in one window, with its reasons."""
    state, reasons = STEADY, []
    for name, found in sorted(drift.items()):
        if found["level"] == "alarm":
            state = DRIFTING
            reasons.append(f"input {name}: PSI {found['psi']:.3f} at or above the alarm "
                           f"level 0.25")
    evaluation_value = reference.evaluation_metrics.get(settings.quality_metric)
    if quality is not None and quality.value is not None and evaluation_value is not None:
        if is_below(quality, evaluation_value, settings.quality_margin):
            state = DEGRADING
            reasons.append(
                f"live {quality.metric} {quality.value:.3f} (interval {quality.ci_low:.3f} to "
                f"{quality.ci_high:.3f}) is worse than the evaluation's {evaluation_value:.3f} "
                f"by more than the margin {settings.quality_margin:g}")
    return state, reasons


def build_report(model: str, task: str, settings: ReportSettings,
                 summaries: Mapping[tuple[int, int], WindowSummary],
                 references: Mapping[int, Reference],
                 rows: Mapping[tuple[int, int], WindowRowsOf],
                 incumbents: Mapping[int, int | None],
                 outcome_counts: Mapping[str, int]) -> dict[str, Any]:
    """The report document. `incumbents`: per report window start, the version holding the top
    stage then (its predictions are what a shadow is compared with)."""
    windows: dict[int, list[dict[str, Any]]] = {}
    latest: dict[int, dict[str, Any]] = {}
    for (version, start), summary in sorted(summaries.items(), key=lambda i: (i[0][1], i[0][0])):
        reference = references[version]
        entry: dict[str, Any] = {"version": version, "rows": summary.rows,
                                 "input_drift": input_drift(reference, summary),
                                 "prediction_drift": prediction_drift(reference, summary)}
        incumbent = incumbents.get(start)
        mine = rows.get((version, start))
        if incumbent is not None and incumbent != version and mine is not None \
                and (incumbent, start) in rows:
            theirs = rows[(incumbent, start)]
            in_mine, in_theirs = shared_rows(mine.hashes, theirs.hashes)
            entry["agreement"] = agreement(
                version, incumbent, task, mine.predictions[in_mine],
                theirs.predictions[in_theirs], reference.threshold).to_dict()
        quality = None
        if mine is not None and mine.labels is not None:
            known = ~np.isnan(mine.labels)
            if known.any():
                labels = mine.labels[known]
                labels = labels.astype(np.int64) if task != "regression" else labels
                quality = live_quality(task, labels, mine.predictions[known], reference.classes,
                                       settings.quality_metric, threshold=reference.threshold,
                                       confidence=settings.confidence)
                entry["quality"] = {
                    **quality.to_dict(),
                    "evaluation_value": reference.evaluation_metrics.get(settings.quality_metric),
                    "margin": settings.quality_margin}
        entry["state"], entry["reasons"] = judge(entry["input_drift"], quality, reference,
                                                 settings)
        windows.setdefault(start, []).append(entry)
        _keep_latest(latest, version, start, entry, quality)
    return {
        "model": model, "task": task, "window_seconds": settings.window_seconds,
        "quality_metric": settings.quality_metric, "quality_margin": settings.quality_margin,
        "levels": {"psi_warn": 0.1, "psi_alarm": 0.25},
        "versions": {str(v): _version_state(v, latest[v], references[v])
                     for v in sorted(latest)},
        "windows": [{"start": iso(start), "end": iso(start + settings.window_seconds),
                     "incumbent": incumbents.get(start), "versions": entries}
                    for start, entries in sorted(windows.items())],
        "outcomes": dict(outcome_counts),
    }


def _keep_latest(latest: dict[int, dict[str, Any]], version: int, start: int,
                 entry: dict[str, Any], quality: LiveQuality | None) -> None:
    held = latest.setdefault(version, {"rows": 0})
    held["rows"] += entry["rows"]
    held["drift_window"] = start
    held["drift_reasons"] = [r for r in entry["reasons"] if r.startswith("input ")]
    if quality is not None and quality.value is not None:
        held["quality_window"] = start
        held["quality_reasons"] = [r for r in entry["reasons"] if r.startswith("live ")]
        held["quality"] = entry["quality"]
    if "agreement" in entry:
        held["agreement"] = entry["agreement"]


def _version_state(version: int, held: dict[str, Any], reference: Reference) -> dict[str, Any]:
    """A version's state now: drift as of its newest window, quality as of the newest window
    whose outcomes have arrived."""
    reasons = held.get("quality_reasons", []) + held.get("drift_reasons", [])
    state = DEGRADING if held.get("quality_reasons") else DRIFTING if held.get(
        "drift_reasons") else STEADY
    document = {"state": state, "reasons": reasons, "rows": held["rows"],
                "newest_window": iso(held["drift_window"]),
                "training_dataset": reference.training_dataset,
                "evaluation_dataset": reference.evaluation_dataset}
    if "quality_window" in held:
        document["quality"] = {**held["quality"], "window": iso(held["quality_window"])}
    if "agreement" in held:
        document["agreement"] = held["agreement"]
    return document


def predictions_matrix(table: pa.Table, columns: Sequence[str]) -> np.ndarray:
    if len(columns) == 1:
        return table.column(columns[0]).to_numpy()
    return np.column_stack([table.column(c).to_numpy() for c in columns])
