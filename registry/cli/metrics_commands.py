"""`lockkeeper metrics`: metrics of a predictions file and a paired comparison, no catalogue."""

from __future__ import annotations

from typing import Any

import click

from registry.cli.output import emit, json_option
from registry.cli.params import FilePath
from registry.cli.progress import progress_bar
from registry.evaluation import evaluate_file
from registry.metric_names import HIGHER_IS_BETTER


@click.command("metrics")
@click.argument("predictions", type=FilePath("a predictions file"))
@click.option("--task", type=click.Choice(["binary", "regression", "multiclass"]), default=None,
              help="What the predictions predict (default: told by the prediction columns).")
@click.option("--baseline", type=FilePath("a predictions file"), default=None,
              help="Predictions of the version to compare against, on the same rows.")
@click.option("--slice", "slice_column", default=None, metavar="COLUMN",
              help="Also report per value of this column (Holm-adjusted with --baseline).")
@click.option("--threshold", type=float, default=0.5, show_default=True,
              help="Binary: a score at or above this decides class 1 (for accuracy).")
@click.option("--confidence", type=float, default=0.95, show_default=True,
              help="Confidence level of the intervals.")
@click.option("--seed", type=int, default=0, show_default=True,
              help="Seed of the bootstrap resamples.")
@click.option("--resamples", type=click.IntRange(min=100), default=1000, show_default=True,
              help="Bootstrap resamples.")
@json_option
def metrics_command(predictions: str, task: str | None, baseline: str | None,
                    slice_column: str | None, threshold: float, confidence: float, seed: int,
                    resamples: int, as_json: bool) -> None:
    """Metrics of PREDICTIONS (CSV or Parquet); with --baseline, candidate - baseline."""
    from registry.evaluation.predictions import infer_task

    task = task or infer_task(predictions)
    with progress_bar("bootstrap", unit="resamples"):
        report = evaluate_file(predictions, task, baseline, slice_column, threshold=threshold,
                               confidence=confidence, seed=seed, resamples=resamples)
    emit(report.to_dict(), as_json, render_text)


def _number(value: float | None) -> str:
    return "-" if value is None else f"{value:.4f}"


def _p(value: float | None) -> str:
    return "-" if value is None else (f"{value:.2e}" if value < 1e-4 else f"{value:.4f}")


def render_text(document: dict[str, Any]) -> str:
    lines = [f"{document['task']} predictions, {document['n']} rows"]
    for name, value in document["metrics"].items():
        better = "higher is better" if HIGHER_IS_BETTER[name] else "lower is better"
        lines.append(f"  {name:<18} {_number(value):>10}   ({better})")
    if "matching" in document:
        m = document["matching"]
        lines.append("")
        lines.append(f"against the baseline on {m['matched']} shared rows "
                     f"({m['candidate_only']} only in the candidate, "
                     f"{m['baseline_only']} only in the baseline); "
                     f"difference = candidate - baseline, {document['confidence']:.0%} interval")
        for name, d in document["comparison"].items():
            lines.append(f"  {name:<18} {d['difference']:+.4f}  [{d['ci_low']:+.4f}, "
                         f"{d['ci_high']:+.4f}]  p={_p(d['p_value'])}  {d['method']}")
    if document["slices"]:
        s = document["slices"]
        lines.append("")
        lines.append(f"by {s['column']}:")
        for value, result in s["values"].items():
            lines.append(f"  {value} ({result['n']} rows)")
            for name, metric in result["metrics"].items():
                d = result.get("comparison", {}).get(name)
                detail = "" if d is None else (
                    f"  {d['difference']:+.4f} [{d['ci_low']:+.4f}, {d['ci_high']:+.4f}]"
                    f"  p={_p(d['p_value'])} holm={_p(d['p_value_holm'])}")
                lines.append(f"    {name:<16} {_number(metric):>10}{detail}")
    if document.get("calibration"):
        lines.append("")
        lines.append("calibration (tenths of the score):")
        for b in document["calibration"]:
            if b["count"]:
                opening = "[" if b["lower"] == 0 else "("
                lines.append(f"  {opening}{b['lower']:.1f}, {b['upper']:.1f}]  "
                             f"{b['count']:>8} rows  mean score {b['mean_score']:.4f}  "
                             f"observed {b['observed_rate']:.4f}")
    return "\n".join(lines)
