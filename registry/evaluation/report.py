"""One evaluation of predictions, with a baseline and per slice if asked: the metrics JSON."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any

from registry.evaluation.comparison import ComparisonReport, check_confidence, compare
from registry.evaluation.metrics import MetricReport, compute_metrics
from registry.evaluation.predictions import Predictions, read_predictions
from registry.evaluation.slices import SliceReport, compare_slices, slice_metrics
from registry.metric_names import HIGHER_IS_BETTER, METRIC_NAMES


@dataclass(frozen=True)
class EvaluationReport:
    metrics: MetricReport
    comparison: ComparisonReport | None = None
    slices: SliceReport | None = None

    def to_dict(self) -> dict[str, Any]:
        """The JSON document of `lockkeeper metrics` (DESIGN.md), plus context keys after it."""
        document: dict[str, Any] = {
            "task": self.metrics.task,
            "n": self.metrics.n,
            "metrics": dict(self.metrics.metrics),
            "comparison": self.comparison.to_dict() if self.comparison else {},
            "slices": self.slices.to_dict() if self.slices else {},
            "higher_is_better": {name: HIGHER_IS_BETTER[name]
                                 for name in METRIC_NAMES[self.metrics.task]},
        }
        if self.metrics.threshold is not None:
            document["threshold"] = self.metrics.threshold
        if self.metrics.calibration:
            document["calibration"] = [dict(b.__dict__) for b in self.metrics.calibration]
        if self.comparison:
            c = self.comparison
            document["matching"] = {
                "matched": c.matching.matched, "candidate_only": c.matching.candidate_only,
                "baseline_only": c.matching.baseline_only,
                "candidate_metrics": c.candidate.metrics, "baseline_metrics": c.baseline.metrics,
            }
            document["confidence"] = c.confidence
            document["seed"] = c.seed
            document["resamples"] = c.resamples
        return document


def evaluate(candidate: Predictions, baseline: Predictions | None = None,
             slice_column: str | None = None, *, threshold: float = 0.5,
             confidence: float = 0.95, seed: int = 0, resamples: int = 1000) -> EvaluationReport:
    """Metrics of the candidate; with a baseline, the paired comparison; with a slice, per slice."""
    check_confidence(confidence)
    metrics = compute_metrics(candidate, threshold=threshold)
    comparison = None
    slices = None
    if baseline is not None:
        comparison = compare(candidate, baseline, confidence=confidence, seed=seed,
                             resamples=resamples, threshold=threshold)
        if slice_column is not None:
            slices = compare_slices(candidate, baseline, slice_column, confidence=confidence,
                                    seed=seed, resamples=resamples, threshold=threshold)
    elif slice_column is not None:
        slices = slice_metrics(candidate, slice_column, threshold=threshold)
    return EvaluationReport(metrics, comparison, slices)


def evaluate_file(path: str | Path, task: str, baseline: str | Path | None = None,
                  slice_column: str | None = None, *, threshold: float = 0.5,
                  confidence: float = 0.95, seed: int = 0, resamples: int = 1000
                  ) -> EvaluationReport:
    """Read the predictions (and the baseline's) and evaluate them."""
    candidate = read_predictions(path, task)
    base = read_predictions(baseline, task) if baseline is not None else None
    return evaluate(candidate, base, slice_column, threshold=threshold, confidence=confidence,
                    seed=seed, resamples=resamples)
