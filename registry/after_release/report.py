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
from registry.after_release.quality import LiveQuality, is_below, live_quality
from registry.after_release.summaries import WindowSummary, merge_summaries
from registry.after_release.windows import iso
from registry.datasets.drift import column_drift
from registry.datasets.profile import ColumnProfile
from registry.plain import to_plain

STEADY, DRIFTING, DEGRADING = "steady", "drifting", "degrading"
# what the kept figures of a window hold besides what a report shows of it
KEPT_ONLY = ("training_dataset", "evaluation_dataset", "incumbent", "task", "metric",
             "confidence")
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


def judge(drift: Mapping[str, Mapping[str, Any]], quality: Mapping[str, Any] | None,
          settings: ReportSettings) -> tuple[str, list[str]]:
    """The state of one version in one window, with its reasons. `quality`: the live quality
    figures of the window with the evaluation's value beside them."""
    state, reasons = STEADY, []
    for name, found in sorted(drift.items()):
        if found["level"] == "alarm":
            state = DRIFTING
            reasons.append(f"input {name}: PSI {found['psi']:.3f} at or above the alarm "
                           f"level 0.25")
    if quality is None or quality.get("value") is None:
        return state, reasons
    evaluation_value = quality.get("evaluation_value")
    live = LiveQuality(rows=quality["rows"], metrics=quality["metrics"], metric=quality["metric"],
                       value=quality["value"], ci_low=quality.get("ci_low"),
                       ci_high=quality.get("ci_high"))
    if evaluation_value is not None and is_below(live, evaluation_value, settings.quality_margin):
        state = DEGRADING
        reasons.append(
            f"live {live.metric} {live.value:.3f} (interval {live.ci_low:.3f} to "
            f"{live.ci_high:.3f}) is worse than the evaluation's {evaluation_value:.3f} "
            f"by more than the margin {settings.quality_margin:g}")
    return state, reasons


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


def build_report(model: str, task: str, settings: ReportSettings,
                 figures: Mapping[tuple[int, int], Mapping[str, Any]],
                 incumbents: Mapping[int, int | None],
                 outcome_counts: Mapping[str, int]) -> dict[str, Any]:
    """The report document from each (version, window start)'s figures. `incumbents`: per
    window start, the version holding the top stage then."""
    windows: dict[int, list[dict[str, Any]]] = {}
    latest: dict[int, dict[str, Any]] = {}
    for (version, start), found in sorted(figures.items(), key=lambda i: (i[0][1], i[0][0])):
        entry = {k: v for k, v in found.items() if k not in KEPT_ONLY}
        if "quality" in entry:
            entry["quality"] = {**entry["quality"], "margin": settings.quality_margin}
        entry["state"], entry["reasons"] = judge(entry["input_drift"], entry.get("quality"),
                                                 settings)
        windows.setdefault(start, []).append(entry)
        _keep_latest(latest, version, start, entry, found)
    return {
        "model": model, "task": task, "window_seconds": settings.window_seconds,
        "quality_metric": settings.quality_metric, "quality_margin": settings.quality_margin,
        "levels": {"psi_warn": 0.1, "psi_alarm": 0.25},
        "versions": {str(v): _version_state(latest[v]) for v in sorted(latest)},
        "windows": [{"start": iso(start), "end": iso(start + settings.window_seconds),
                     "incumbent": incumbents.get(start), "versions": entries}
                    for start, entries in sorted(windows.items())],
        "outcomes": dict(outcome_counts),
    }


def _keep_latest(latest: dict[int, dict[str, Any]], version: int, start: int,
                 entry: dict[str, Any], found: Mapping[str, Any]) -> None:
    held = latest.setdefault(version, {"rows": 0})
    held["rows"] += entry["rows"]
    held["drift_window"] = start
    held["drift_reasons"] = [r for r in entry["reasons"] if r.startswith("input ")]
    held["training_dataset"] = found.get("training_dataset")
    held["evaluation_dataset"] = found.get("evaluation_dataset")
    quality = entry.get("quality")
    if quality is not None and quality.get("value") is not None:
        held["quality_window"] = start
        held["quality_reasons"] = [r for r in entry["reasons"] if r.startswith("live ")]
        held["quality"] = quality
    if "agreement" in entry:
        held["agreement"] = entry["agreement"]


def _version_state(held: dict[str, Any]) -> dict[str, Any]:
    """A version's state now: drift as of its newest window, quality as of the newest window
    whose outcomes have arrived."""
    reasons = held.get("quality_reasons", []) + held.get("drift_reasons", [])
    state = DEGRADING if held.get("quality_reasons") else DRIFTING if held.get(
        "drift_reasons") else STEADY
    document = {"state": state, "reasons": reasons, "rows": held["rows"],
                "newest_window": iso(held["drift_window"]),
                "training_dataset": held.get("training_dataset"),
                "evaluation_dataset": held.get("evaluation_dataset")}
    if "quality_window" in held:
        document["quality"] = {**held["quality"], "window": iso(held["quality_window"])}
    if "agreement" in held:
        document["agreement"] = held["agreement"]
    return document


def predictions_matrix(table: pa.Table, columns: Sequence[str]) -> np.ndarray:
    if len(columns) == 1:
        return table.column(columns[0]).to_numpy()
    return np.column_stack([table.column(c).to_numpy() for c in columns])
