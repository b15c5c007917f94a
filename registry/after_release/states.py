"""The state of a version after release, from the figures kept with each window.

Pure and light (no numpy, no Arrow): `status`, the pages and the report read stored figures
through here; the figures themselves are computed in report.py and quality.py. The states follow
Breck et al., The ML Test Score (2017), Monitoring tests 1-7: inputs that drift are an alarm
(PSI at or above 0.25); live quality whose interval falls below the evaluation value by more
than the policy's margin is degrading.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from typing import Any

from registry.after_release.windows import iso
from registry.metric_names import HIGHER_IS_BETTER

DEFAULT_METRIC = {"binary": "roc_auc", "regression": "mae", "multiclass": "accuracy"}
STEADY, DRIFTING, DEGRADING = "steady", "drifting", "degrading"
# what the kept figures of a window hold besides what a report shows of it
KEPT_ONLY = ("training_dataset", "evaluation_dataset", "incumbent", "task", "metric",
             "confidence")
SEVERITY = {STEADY: 0, DRIFTING: 1, DEGRADING: 2}



@dataclass(frozen=True)
class ReportSettings:
    window_seconds: int
    quality_metric: str
    quality_margin: float
    confidence: float = 0.95


@dataclass(frozen=True)
class LiveQuality:
    rows: int
    metrics: dict[str, float | None]
    metric: str
    value: float | None
    ci_low: float | None = None
    ci_high: float | None = None
    method: str | None = None
    notes: tuple[str, ...] = field(default=())

    def to_dict(self) -> dict[str, Any]:
        return {"rows": self.rows, "metrics": self.metrics, "metric": self.metric,
                "value": self.value, "ci_low": self.ci_low, "ci_high": self.ci_high,
                "method": self.method, "notes": list(self.notes)}


def is_below(quality: LiveQuality, evaluation_value: float, margin: float) -> bool:
    """Live quality's whole interval worse than the evaluation value by more than the margin."""
    if quality.ci_low is None or quality.ci_high is None:
        return False
    if HIGHER_IS_BETTER.get(quality.metric, True):
        return quality.ci_high < evaluation_value - margin
    return quality.ci_low > evaluation_value + margin


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


def task_of(summaries: Iterable[Any]) -> str | None:
    """The task of window summaries (each has one); the first by name if they differ."""
    tasks = {s.task for s in summaries}
    return sorted(tasks)[0] if tasks else None
