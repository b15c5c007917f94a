"""Benchmarks of the evaluation core on 1,000,000 rows (run: pytest tests/bench/<this file> -s).

Each figure is a ratio against a reference measured in the same run, best of a few rounds,
taken in turns so that load on the machine falls on both sides alike.
"""

from __future__ import annotations

import time
from collections.abc import Callable

import numpy as np
from sklearn.metrics import roc_auc_score

from registry.evaluation import Predictions, compute_metrics, delong_difference, paired_bootstrap

ROWS = 1_000_000


def two_models(rows: int = ROWS, seed: int = 0) -> tuple[Predictions, Predictions]:
    rng = np.random.default_rng(seed)
    labels = (rng.random(rows) < 0.3).astype(np.int8)
    ids = np.arange(rows).astype(str)

    def model(noise: float) -> Predictions:
        logits = 1.2 * (2.0 * labels - 1.0) + rng.normal(0.0, noise, rows)
        return Predictions("binary", ids, labels, 1.0 / (1.0 + np.exp(-logits)), ("0", "1"))

    return model(1.0), model(1.2)


def best_of_turns(rounds: int, **jobs: Callable[[], object]) -> dict[str, float]:
    best = {name: float("inf") for name in jobs}
    for _ in range(rounds):
        for name, job in jobs.items():
            start = time.perf_counter()
            job()
            best[name] = min(best[name], time.perf_counter() - start)
    return best


def test_delong_on_two_models_within_3x_of_scikit_learn_auc_of_one():
    candidate, baseline = two_models()
    labels = candidate.labels
    times = best_of_turns(
        3,
        sklearn_roc_auc_one_model=lambda: roc_auc_score(labels, candidate.scores),
        delong_two_models=lambda: delong_difference(labels, candidate.scores, baseline.scores),
    )
    ratio = times["delong_two_models"] / times["sklearn_roc_auc_one_model"]
    print(f"\nDeLong, two models, {ROWS:,} rows: {times['delong_two_models']:.3f} s; "
          f"scikit-learn roc_auc_score, one model: {times['sklearn_roc_auc_one_model']:.3f} s; "
          f"ratio {ratio:.2f} (limit 3)")
    assert ratio <= 3.0


def test_1000_bootstrap_resamples_within_20x_of_one_metric_computation():
    """Reference: compute_metrics on the candidate's 1,000,000 rows (every binary metric once).

    Timed: the paired bootstrap of the default binary set (average_precision, log_loss, brier,
    accuracy), candidate and baseline, 1,000 resamples of all 1,000,000 rows.
    """
    candidate, baseline = two_models()
    paired_bootstrap(candidate, baseline, resamples=16, seed=1)  # load the compiled kernels
    times = best_of_turns(
        2,
        compute_metrics_once=lambda: compute_metrics(candidate),
        bootstrap_1000=lambda: paired_bootstrap(candidate, baseline, resamples=1000, seed=1),
    )
    ratio = times["bootstrap_1000"] / times["compute_metrics_once"]
    print(f"\n1,000 paired resamples of {ROWS:,} rows (average_precision, log_loss, brier, "
          f"accuracy): {times['bootstrap_1000']:.2f} s; compute_metrics once: "
          f"{times['compute_metrics_once']:.3f} s; ratio {ratio:.1f} (limit 20)")
    assert ratio <= 20.0
