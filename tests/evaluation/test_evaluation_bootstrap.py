"""The paired bootstrap: resample weights, weighted metrics, interval coverage, reproducibility."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.stats import poisson
from sklearn import metrics as sk

from evaluation_data import binary_pair, multiclass_pair, regression_pair
from registry.evaluation import Predictions, paired_bootstrap, resample_weights
from registry.evaluation.bootstrap import BOOTSTRAP_METRICS, MULTINOMIAL_ROWS, difference_statistic


def test_small_files_resample_rows_with_replacement_n_times():
    # Efron and Tibshirani (1993), ch. 6: each resample draws n rows with replacement.
    chunks = list(resample_weights(500, 300, seed=1))
    weights = np.vstack(chunks)
    assert weights.shape == (300, 500)
    assert (weights.sum(axis=1) == 500).all()


def test_large_files_get_poisson_one_weights():
    # The Poisson bootstrap (Hanley and MacGibbon 2006): independent Poisson(1) counts per row.
    # Reference frequencies: scipy.stats.poisson.pmf; the draw is seeded, and 6 standard
    # deviations leave no room for a flaky failure.
    rows = MULTINOMIAL_ROWS + 1
    weights = np.vstack(list(resample_weights(rows, 40, seed=2))).ravel()
    counts = np.bincount(weights, minlength=12)
    total = weights.size
    for k in range(8):
        expected = poisson.pmf(k, 1.0) * total
        assert abs(counts[k] - expected) <= 6 * np.sqrt(expected) + 1, k
    assert weights.mean() == pytest.approx(1.0, abs=6 / np.sqrt(total))
    assert weights.var() == pytest.approx(1.0, abs=12 / np.sqrt(total))


def test_the_same_seed_gives_the_same_resamples_and_another_seed_others():
    first = np.vstack(list(resample_weights(MULTINOMIAL_ROWS + 5, 3, seed=7)))
    again = np.vstack(list(resample_weights(MULTINOMIAL_ROWS + 5, 3, seed=7)))
    other = np.vstack(list(resample_weights(MULTINOMIAL_ROWS + 5, 3, seed=8)))
    assert (first == again).all() and not (first == other).all()


def _repeated(predictions: Predictions, counts: np.ndarray) -> Predictions:
    return predictions.take(np.repeat(np.arange(len(predictions)), counts))


def _reference(name: str, p: Predictions) -> float:
    """scikit-learn's value of a metric, the reference for the weighted statistics."""
    y, s = p.labels, p.scores
    if p.task == "multiclass":
        decided = np.argmax(s, axis=1)
        return {"accuracy": lambda: sk.accuracy_score(y, decided),
                "macro_f1": lambda: sk.f1_score(y, decided, average="macro"),
                "log_loss": lambda: sk.log_loss(y, s, labels=list(range(len(p.classes))))
                }[name]()
    return {"average_precision": lambda: sk.average_precision_score(y, s),
            "log_loss": lambda: sk.log_loss(y, s, labels=[0, 1]),
            "brier": lambda: sk.brier_score_loss(y, s),
            "accuracy": lambda: sk.accuracy_score(y, s >= 0.5),
            "rmse": lambda: np.sqrt(sk.mean_squared_error(y, s)),
            "mae": lambda: sk.mean_absolute_error(y, s),
            "r2": lambda: sk.r2_score(y, s)}[name]()


@pytest.mark.parametrize("pair", [
    binary_pair(21, 400, decimals=2), regression_pair(22, 400), multiclass_pair(23, 400)],
    ids=["binary", "regression", "multiclass"])
def test_a_weighted_resample_equals_the_metric_on_the_rows_repeated(pair):
    candidate, baseline = pair
    weights = next(resample_weights(len(candidate), 4, seed=3))
    for name in BOOTSTRAP_METRICS[candidate.task]:
        statistic = difference_statistic(name, candidate, baseline, 0.5)
        if hasattr(statistic, "columns"):
            values = statistic.finish(weights.astype(np.float64) @ statistic.columns,
                                      weights.sum(axis=1).astype(np.float64))
        else:
            # The ranked statistic reads weights rows x resamples.
            values = statistic.resampled(np.ascontiguousarray(weights.T))
        for row, counts in enumerate(weights):
            expected = (_reference(name, _repeated(candidate, counts))
                        - _reference(name, _repeated(baseline, counts)))
            assert values[row] == pytest.approx(expected, rel=1e-5, abs=1e-9), name


def test_average_precision_with_ties_and_positives_drawn_zero_times_matches_scikit_learn():
    # Scores rounded to one decimal make large tie groups; weight 0 leaves out positives, and in
    # the first resample the whole top group. Reference: scikit-learn's average_precision_score
    # on the rows repeated by their weights.
    candidate, baseline = binary_pair(41, 300, decimals=1)
    rng = np.random.default_rng(6)
    weights = rng.integers(0, 3, size=(4, 300)).astype(np.uint8)
    weights[0, candidate.scores == candidate.scores.max()] = 0
    weights[1, (candidate.labels == 1) & (rng.random(300) < 0.5)] = 0
    statistic = difference_statistic("average_precision", candidate, baseline, 0.5)
    values = statistic.resampled(np.ascontiguousarray(weights.T))
    for row, counts in enumerate(weights):
        expected = (sk.average_precision_score(*_labels_and_scores(_repeated(candidate, counts)))
                    - sk.average_precision_score(*_labels_and_scores(_repeated(baseline, counts))))
        assert values[row] == pytest.approx(expected, rel=1e-5, abs=1e-9), row


def test_a_resample_that_draws_no_positive_has_no_average_precision():
    candidate, baseline = binary_pair(42, 200, decimals=2)
    weights = np.where(candidate.labels == 1, 0, 1).astype(np.uint8)[:, None]
    statistic = difference_statistic("average_precision", candidate, baseline, 0.5)
    assert np.isnan(statistic.resampled(weights)).all()


def _labels_and_scores(predictions: Predictions) -> tuple[np.ndarray, np.ndarray]:
    return predictions.labels, predictions.scores


def test_point_differences_are_the_full_sample_differences():
    candidate, baseline = binary_pair(24, 800, decimals=2)
    results = paired_bootstrap(candidate, baseline, resamples=200, seed=0)
    for name, result in results.items():
        expected = _reference(name, candidate) - _reference(name, baseline)
        assert result.difference == pytest.approx(expected, rel=1e-12, abs=1e-15), name
        assert result.ci_low <= result.ci_high


def test_percentile_intervals_cover_the_true_difference_about_95_percent_of_the_time():
    # Coverage over repeated simulated draws (Efron and Tibshirani 1993, ch. 13 and 22): the
    # true brier and log-loss differences of the population are estimated on 2,000,000 rows.
    # Seeded throughout, so the count is fixed; 400 draws give a binomial standard deviation of
    # about 1.1 points (this seed covers 94.75 % and 95.25 %), and the band allows for the
    # percentile interval's slight undercover at n = 150.
    population_candidate, population_baseline = binary_pair(99, 2_000_000)
    truth = {
        "brier": _reference("brier", population_candidate) - _reference(
            "brier", population_baseline),
        "log_loss": _reference("log_loss", population_candidate) - _reference(
            "log_loss", population_baseline),
    }
    rng = np.random.default_rng(5)
    covered = {name: 0 for name in truth}
    draws = 400
    for draw in range(draws):
        rows = rng.integers(0, 2_000_000, 150)
        results = paired_bootstrap(population_candidate.take(rows),
                                   population_baseline.take(rows), list(truth),
                                   resamples=400, seed=draw)
        for name, value in truth.items():
            covered[name] += results[name].ci_low <= value <= results[name].ci_high
    for name in truth:
        assert 0.91 <= covered[name] / draws <= 0.985, (name, covered[name])


def test_poisson_intervals_have_the_width_of_the_mean_difference_standard_error():
    # For a mean, the bootstrap standard error is sd(d) / sqrt(n) (Efron and Tibshirani 1993,
    # eq. 5.7 with the plug-in variance); 1,000 resamples estimate it to about 2 %.
    candidate, baseline = binary_pair(31, MULTINOMIAL_ROWS * 2)
    d = (candidate.scores - candidate.labels) ** 2 - (baseline.scores - baseline.labels) ** 2
    result = paired_bootstrap(candidate, baseline, ["brier"], resamples=1000, seed=4)["brier"]
    half_width = (result.ci_high - result.ci_low) / 2
    assert half_width / 1.959964 == pytest.approx(d.std() / np.sqrt(d.size), rel=0.08)


def test_a_clear_difference_gets_a_small_p_value_and_no_difference_a_large_one():
    candidate, baseline = binary_pair(32, 3_000)
    clear = paired_bootstrap(candidate, baseline, ["brier"], resamples=500)["brier"]
    assert clear.ci_high < 0 and clear.p_value < 0.01
    same = paired_bootstrap(candidate, candidate, ["brier"], resamples=500)["brier"]
    assert same.difference == 0 and same.p_value == 1.0


def test_the_compiled_weighted_sums_equal_numpy_s_product():
    """add_weighted_sums against its numpy definition: block @ columns of the block's rows,
    added to what the sums held; float32 within the block, as a BLAS product takes it."""
    from registry.evaluation import ranking_kernels

    rng = np.random.default_rng(4)
    block = rng.integers(0, 6, (16, 1000)).astype(np.uint8)
    column_rows = rng.normal(size=(5, 3000)).astype(np.float32)
    sums = rng.normal(size=(16, 5))
    expected = sums + block.astype(np.float64) @ column_rows[:, 1200:2200].T.astype(np.float64)
    ranking_kernels.add_weighted_sums(block, column_rows, 1200, sums)
    assert np.allclose(sums, expected, rtol=1e-5, atol=1e-3)
