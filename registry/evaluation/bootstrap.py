"""Seeded, vectorised paired bootstrap of metric differences (Efron and Tibshirani 1993).

Each resample gives every row a weight, the number of times the row is drawn, shared by both
models (that is what makes it paired). Metrics are then weighted sums of per-row values, taken
by a compiled pass over each block of rows for all the resamples of a chunk (W @ per-row
values, as a matrix product would, but without holding the GIL): float32 within a block of
rows, summed in float64 (on 1,000,000 rows the rounding is about 1e-9, some 1e-5 of the
resampling spread). The ranking metric (average precision) sorts each model once; each chunk
of weights is then transposed to rows x resamples and walked in score order by a compiled pass
(ranking_kernels), which sums the weights exactly and reads precision at the end of each group
of tied scores. Both passes release the GIL and run on a worker thread while the next chunk is
drawn, so on two cores the two halves of the work overlap.

Weights: multinomial counts (Efron's bootstrap, n draws with replacement) for up to
MULTINOMIAL_ROWS rows; above that independent Poisson(1) counts, the Poisson bootstrap
(Hanley and MacGibbon 2006, Computer Methods and Programs in Biomedicine 83:57-62; Chamandy et
al. 2012, Estimating uncertainty for massive data streams), which has the same first two moments
and is indistinguishable at that size, but costs one random byte a row instead of a random index
and a scatter.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterator, Sequence
from concurrent.futures import Future, ThreadPoolExecutor
from dataclasses import dataclass

import numpy as np

from registry import progress
from registry.evaluation import metrics as m
from registry.evaluation.predictions import Predictions
from registry.lazy_import import lazy_import

kernels = lazy_import("registry.evaluation.ranking_kernels")  # loads numba on first use

MULTINOMIAL_ROWS = 50_000
CHUNK_CELLS = 16_000_000  # weights held at once (resamples x rows), one byte each
ROW_BLOCK = 16_384  # rows per matrix product, so the float32 block stays in cache
BOOTSTRAP_METRICS = {
    "binary": ("average_precision", "log_loss", "brier", "accuracy"),
    "regression": ("rmse", "mae", "r2"),
    "multiclass": ("accuracy", "macro_f1", "log_loss"),
}


@dataclass(frozen=True)
class BootstrapResult:
    """Resampled differences (candidate - baseline) of one metric and their summary."""

    difference: float
    ci_low: float
    ci_high: float
    p_value: float
    resamples: int


_UNRESOLVED = 255
_FIRST_LEVEL_MOST = 4  # weights up to this are read off the first byte by comparisons


@dataclass(frozen=True)
class _PoissonBytes:
    """Exact Poisson(1) draws from one random byte each (a second byte for about 2 %).

    The byte picks one of 256 equal intervals of the uniform. Intervals that lie within one step
    of the Poisson(1) CDF with a weight of at most 4 are renumbered first, in order of their
    weight, so the weight is a count of thresholds passed. The rest (the five intervals a CDF
    step cuts through) come last and are resolved exactly by where in the interval the uniform
    fell: a second byte, and for the few sub-intervals a step cuts again, a fresh uniform.
    """

    thresholds: tuple[int, ...]  # byte b < first_level has weight #{t in thresholds: b >= t}
    first_level: int
    second_intervals: np.ndarray  # interval of byte first_level + i
    cdf: np.ndarray
    second_level: np.ndarray  # weight of (second interval, second byte), or _UNRESOLVED

    @classmethod
    def build(cls) -> _PoissonBytes:
        k = np.arange(40)
        cdf = np.minimum(np.cumsum(np.exp(-1.0 - np.array([math.lgamma(i + 1.0) for i in k]))),
                         1.0)
        intervals = np.arange(256)
        low = np.searchsorted(cdf, intervals / 256.0, side="right")
        below_high = np.searchsorted(cdf, (intervals + 1) / 256.0, side="left")
        on_first = (low == below_high) & (low <= _FIRST_LEVEL_MOST)
        first_weights = low[on_first]
        thresholds = tuple(int(np.searchsorted(first_weights, w, side="left"))
                           for w in range(1, _FIRST_LEVEL_MOST + 1))
        second_intervals = intervals[~on_first]
        sub = np.arange(256)[None, :]
        low_edges = (second_intervals[:, None] + sub / 256.0) / 256.0
        high_edges = (second_intervals[:, None] + (sub + 1) / 256.0) / 256.0
        low_weight = np.searchsorted(cdf, low_edges.ravel(), side="right")
        below_high = np.searchsorted(cdf, high_edges.ravel(), side="left")
        second_level = np.where(low_weight == below_high, low_weight, _UNRESOLVED).astype(np.uint8)
        first_level = int(on_first.sum())
        return cls(thresholds, first_level, second_intervals, cdf, second_level)

    def draw(self, rng: np.random.Generator, shape: tuple[int, int]) -> np.ndarray:
        cells = shape[0] * shape[1]
        picks = rng.bit_generator.random_raw((cells + 7) // 8).view(np.uint8)[:cells]
        weights = np.greater_equal(picks, self.thresholds[0]).view(np.uint8)
        passed = np.empty(cells, dtype=np.bool_)
        for threshold in self.thresholds[1:]:
            np.greater_equal(picks, threshold, out=passed)
            weights += passed.view(np.uint8)
        cut = np.flatnonzero(picks >= self.first_level)
        if cut.size:
            second = rng.bit_generator.random_raw((cut.size + 7) // 8).view(np.uint8)[:cut.size]
            interval = picks[cut].astype(np.intp) - self.first_level
            resolved = self.second_level.take(interval * 256 + second)
            deep = np.flatnonzero(resolved == _UNRESOLVED)
            if deep.size:
                where = (self.second_intervals[interval[deep]]
                         + (second[deep] + rng.random(deep.size)) / 256.0) / 256.0
                resolved[deep] = np.searchsorted(self.cdf, where, side="right")
            weights[cut] = resolved
        return weights.reshape(shape)


_POISSON = _PoissonBytes.build()


def weight_chunks(rows: int, resamples: int, seed: int | Sequence[int]
                  ) -> Iterator[tuple[int, Iterator[tuple[int, np.ndarray]]]]:
    """Resamples in chunks; each chunk as (size, blocks of (first row, weights of its rows)).

    Poisson weights are drawn one block of rows at a time, so a block is still in cache when
    it is used; the random stream is the same whether or not a caller keeps the whole chunk.
    """
    rng = np.random.default_rng(seed)
    per_chunk = max(1, min(resamples, CHUNK_CELLS // max(rows, 1)))
    done = 0
    while done < resamples:
        count = min(per_chunk, resamples - done)
        if rows <= MULTINOMIAL_ROWS:
            draws = rng.integers(0, rows, size=(count, rows))
            draws += (np.arange(count) * rows)[:, None]
            weights = np.bincount(draws.ravel(), minlength=count * rows)
            chunk = weights.reshape(count, rows).astype(np.uint16)
            blocks = ((first, chunk[:, first:first + ROW_BLOCK])
                      for first in range(0, rows, ROW_BLOCK))
        else:
            blocks = ((first, _POISSON.draw(rng, (count, min(ROW_BLOCK, rows - first))))
                      for first in range(0, rows, ROW_BLOCK))
        yield count, blocks
        done += count


def resample_weights(rows: int, resamples: int, seed: int | Sequence[int]) -> Iterator[np.ndarray]:
    """Chunks of a (resamples x rows) matrix of integer bootstrap weights, fixed by the seed."""
    for _, blocks in weight_chunks(rows, resamples, seed):
        yield np.hstack([block for _, block in blocks])


def paired_bootstrap(candidate: Predictions, baseline: Predictions,
                     metric_names: Sequence[str] | None = None, *, threshold: float = 0.5,
                     confidence: float = 0.95, seed: int | Sequence[int] = 0,
                     resamples: int = 1000) -> dict[str, BootstrapResult]:
    """Percentile intervals and two-sided p-values of metric differences on aligned rows."""
    names = tuple(metric_names or BOOTSTRAP_METRICS[candidate.task])
    statistics = {name: difference_statistic(name, candidate, baseline, threshold)
                  for name in names}
    linear = {name: st for name, st in statistics.items() if isinstance(st, LinearStatistic)}
    ranked = {name: st for name, st in statistics.items() if not isinstance(st, LinearStatistic)}

    # All weighted sums of all linear metrics come from one product per block of rows.
    spans, start = {}, 0
    for name, st in linear.items():
        spans[name] = slice(start, start + st.columns.shape[1])
        start += st.columns.shape[1]
    # The last column is all ones: the total weight of each resample, shared by every metric.
    columns = np.hstack([st.columns for st in linear.values()]
                        + [np.ones((len(candidate), 1))])
    column_rows = np.ascontiguousarray(columns.T, dtype=np.float32)  # each column contiguous

    collected: dict[str, list[np.ndarray]] = {name: [] for name in names}
    # This thread draws each chunk of weights (and lays it out by row for the ranked metrics);
    # a worker then sums it into the linear metrics and walks the ranked ones (compiled passes
    # that let go of the GIL) while this thread draws the next. So at most two chunks of
    # weights are held: the one being drawn and the one being summed.
    buffers: list[np.ndarray | None] = [None, None]
    with ThreadPoolExecutor(max_workers=1) as worker:
        working: Future | None = None
        for index, (count, blocks) in enumerate(weight_chunks(len(candidate), resamples, seed)):
            by_row = buffers[index % 2]
            kept = []
            for first, block in blocks:
                if linear:
                    kept.append((first, block))
                if ranked:
                    if by_row is None or by_row.shape[1] != count or by_row.dtype != block.dtype:
                        by_row = buffers[index % 2] = np.empty((len(candidate), count),
                                                               dtype=block.dtype)
                    kernels.transpose_into(block, by_row[first:first + block.shape[1]])
            progress.advance(count)
            if working is not None:
                working.result()
            working = worker.submit(_finish_chunk, linear, spans, column_rows, count, kept,
                                    ranked, by_row, collected)
        if working is not None:
            working.result()

    results = {}
    totals = columns.sum(axis=0, keepdims=True)
    for name in names:
        statistic = statistics[name]
        if isinstance(statistic, LinearStatistic):
            point = float(statistic.finish(totals[:, spans[name]], totals[:, -1])[0])
        else:
            point = statistic.point
        results[name] = summarise(point, np.concatenate(collected[name]), confidence)
    return results


def _finish_chunk(linear: dict[str, LinearStatistic], spans: dict[str, slice],
                  column_rows: np.ndarray, count: int, kept: list[tuple[int, np.ndarray]],
                  ranked: dict[str, RankedStatistic], by_row: np.ndarray | None,
                  collected: dict[str, list[np.ndarray]]) -> None:
    """One chunk's resampled differences: the linear metrics from the weighted sums of each
    block of rows, the ranked ones from a compiled walk in score order."""
    if linear:
        sums = np.zeros((count, column_rows.shape[0]))
        for first, block in kept:
            kernels.add_weighted_sums(block, column_rows, first, sums)
        for name, statistic in linear.items():
            collected[name].append(statistic.finish(sums[:, spans[name]], sums[:, -1]))
    if ranked:
        assert by_row is not None  # filled by the caller whenever ranked
        for name, walked in ranked.items():
            collected[name].append(walked.resampled(by_row))


def summarise(point: float, differences: np.ndarray, confidence: float) -> BootstrapResult:
    """Percentile interval, and the p-value of the interval that just touches zero.

    p = 2 min(#(d* <= 0) + 1, #(d* >= 0) + 1) / (B + 1), at most 1: about the smallest level
    at which the percentile interval excludes zero, counted so that it is never exactly 0.
    """
    finite = differences[np.isfinite(differences)]
    count = finite.shape[0]
    if count == 0 or not math.isfinite(point):
        return BootstrapResult(point, point, point, 1.0, count)
    alpha = 1.0 - confidence
    low, high = np.quantile(finite, [alpha / 2.0, 1.0 - alpha / 2.0])
    at_or_below = int(np.count_nonzero(finite <= 0.0))
    at_or_above = int(np.count_nonzero(finite >= 0.0))
    p_value = min(1.0, 2.0 * (min(at_or_below, at_or_above) + 1) / (count + 1))
    return BootstrapResult(point, float(low), float(high), p_value, count)


@dataclass(frozen=True)
class LinearStatistic:
    """A metric difference that is a function of weighted column sums.

    finish(W @ columns, total weight of each resample) gives the difference per resample.
    """

    columns: np.ndarray
    finish: Callable[[np.ndarray, np.ndarray], np.ndarray]


@dataclass(frozen=True)
class RankedStatistic:
    """A metric difference that needs each model's rows in score order (average precision).

    resampled(weights) takes weights laid out rows x resamples (each row's resamples
    contiguous, as the compiled pass reads them). point is the difference on all rows in
    float64: the pass's float32 terms (relative error near 1e-7) are for resamples, whose
    spread is far wider.
    """

    point: float
    resampled: Callable[[np.ndarray], np.ndarray]


def difference_statistic(name: str, candidate: Predictions, baseline: Predictions,
                         threshold: float) -> LinearStatistic | RankedStatistic:
    """How to get the metric difference of each resample from its weights."""
    labels = candidate.labels
    if name == "average_precision":
        first = _weighted_average_precision(labels, candidate.scores)
        second = _weighted_average_precision(labels, baseline.scores)
        ours, theirs = (m.average_precision(labels, p.scores) for p in (candidate, baseline))
        return RankedStatistic(
            math.nan if ours is None or theirs is None else ours - theirs,
            lambda weights: first(weights) - second(weights))
    if name == "log_loss":
        if candidate.task == "binary":
            losses = m.binary_log_losses(labels, candidate.scores) - m.binary_log_losses(
                labels, baseline.scores)
        else:
            losses = m.multiclass_log_losses(labels, candidate.scores) - \
                m.multiclass_log_losses(labels, baseline.scores)
        return _weighted_mean(losses)
    if name == "brier":
        return _weighted_mean((candidate.scores - labels) ** 2 - (baseline.scores - labels) ** 2)
    if name == "accuracy":
        correct_c, correct_b = correctness(candidate, threshold), correctness(baseline, threshold)
        return _weighted_mean(correct_c.astype(np.float64) - correct_b)
    if name == "mae":
        return _weighted_mean(np.abs(candidate.scores - labels) - np.abs(baseline.scores - labels))
    if name in ("rmse", "r2"):
        return _weighted_regression(name, labels, candidate.scores, baseline.scores)
    if name == "macro_f1":
        return _weighted_macro_f1_difference(labels, np.argmax(candidate.scores, axis=1),
                                             np.argmax(baseline.scores, axis=1),
                                             len(candidate.classes))
    raise ValueError(f"no bootstrap statistic for {name}")


def correctness(predictions: Predictions, threshold: float) -> np.ndarray:
    """Whether each row's decision is its label."""
    if predictions.task == "binary":
        return m.decide(predictions.scores, threshold) == predictions.labels
    return np.argmax(predictions.scores, axis=1) == predictions.labels


def _weighted_mean(values: np.ndarray) -> LinearStatistic:
    def finish(sums: np.ndarray, total: np.ndarray) -> np.ndarray:
        with np.errstate(invalid="ignore", divide="ignore"):
            return sums[:, 0] / total

    return LinearStatistic(values[:, None].astype(np.float64), finish)


def _weighted_regression(name: str, labels: np.ndarray, candidate: np.ndarray,
                         baseline: np.ndarray) -> LinearStatistic:
    # Centre the labels so that the resampled total sum of squares does not cancel.
    centred = labels - labels.mean()
    columns = np.column_stack([(candidate - labels) ** 2, (baseline - labels) ** 2,
                               centred, centred ** 2])

    def finish(s: np.ndarray, weight: np.ndarray) -> np.ndarray:
        with np.errstate(invalid="ignore", divide="ignore"):
            if name == "rmse":
                return np.sqrt(s[:, 0] / weight) - np.sqrt(s[:, 1] / weight)
            total = s[:, 3] - s[:, 2] ** 2 / weight
            # r2(c) - r2(b) = (SSE_b - SSE_c) / SST
            return (s[:, 1] - s[:, 0]) / total

    return LinearStatistic(columns, finish)


def _weighted_macro_f1_difference(labels: np.ndarray, candidate: np.ndarray,
                                  baseline: np.ndarray, classes: int) -> LinearStatistic:
    def count_columns(decisions: np.ndarray) -> list[np.ndarray]:
        hits = labels == decisions
        return ([hits & (labels == k) for k in range(classes)]
                + [decisions == k for k in range(classes)])

    label_columns = [labels == k for k in range(classes)]
    columns = np.column_stack(label_columns + count_columns(candidate)
                              + count_columns(baseline)).astype(np.float64)

    def macro_f1(label_count: np.ndarray, counts: np.ndarray) -> np.ndarray:
        true_positive, decision_count = counts[:, :classes], counts[:, classes:]
        present = (label_count + decision_count) > 0
        with np.errstate(invalid="ignore", divide="ignore"):
            f1 = np.where(present, 2.0 * true_positive / (label_count + decision_count), 0.0)
        return f1.sum(axis=1) / present.sum(axis=1)

    def finish(s: np.ndarray, weight: np.ndarray) -> np.ndarray:
        label_count = s[:, :classes]
        return (macro_f1(label_count, s[:, classes:3 * classes])
                - macro_f1(label_count, s[:, 3 * classes:]))

    return LinearStatistic(columns, finish)


def _weighted_average_precision(labels: np.ndarray, scores: np.ndarray
                                ) -> Callable[[np.ndarray], np.ndarray]:
    """Average precision with row weights: one sort, then a compiled pass per chunk of resamples.

    With integer weights it equals scikit-learn's average_precision_score on the rows repeated
    that many times: precision is read at the end of each group of tied scores.
    """
    order = np.ascontiguousarray(np.argsort(scores)[::-1], dtype=np.intp)
    is_positive = labels[order] == 1
    closes_group = _closes_positive_group(scores[order], is_positive)

    def statistic(weights_by_row: np.ndarray) -> np.ndarray:
        return kernels.weighted_average_precision(weights_by_row, order, is_positive,
                                                  closes_group)

    return statistic


def _closes_positive_group(ordered: np.ndarray, is_positive: np.ndarray) -> np.ndarray:
    """Whether each place in score order ends a group of tied scores that holds a positive."""
    if ordered.shape[0] == 0:
        return np.zeros(0, dtype=np.bool_)
    starts = np.append(True, ordered[1:] != ordered[:-1])
    group = np.cumsum(starts) - 1
    has_positive = np.bincount(group, weights=is_positive) > 0
    return np.append(starts[1:], True) & has_positive[group]
