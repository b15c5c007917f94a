"""A mergeable histogram on fixed log-linear edges, from which quantiles are read.

The edges are fixed by the number format, not by the data: every double whose lowest
52 - m mantissa bits are zero is an edge, so each bucket spans a relative width of at most 2^-m
(the log-linear bucketing of HdrHistogram and of DDSketch, Masson, Rim and Lee, VLDB 2019).
Histograms of partitions merge by adding counts. When a histogram holds more than
MAX_BUCKETS buckets it drops one mantissa bit (neighbouring buckets join, as in UDDSketch,
Epicoco et al. 2020), which keeps its size bounded whatever the number of rows.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from registry.lazy_import import lazy_import

kernels = lazy_import("registry.datasets.kernels")  # loads numba on first use

MANTISSA_BITS = 7  # relative bucket width 2^-7, so a quantile is within 0.4% of a value seen
MAX_BUCKETS = 2048
_SIGN = np.uint64(1 << 63)


@dataclass(frozen=True)
class LogHistogram:
    """Counts per signed bucket index: 0 holds zeros, +i positive and -i negative magnitudes."""

    mantissa_bits: int
    indices: np.ndarray  # int64, strictly increasing
    counts: np.ndarray  # int64, same length

    @property
    def total(self) -> int:
        return int(self.counts.sum())

    def to_dict(self) -> dict[str, Any]:
        # numpy's tolist gives the same Python ints without a numpy scalar per element
        # (2,048 buckets per histogram, dozens of histograms per served batch)
        pairs = np.stack([self.indices, self.counts], axis=1).astype(np.int64, copy=False)
        return {"mantissa_bits": self.mantissa_bits, "buckets": pairs.tolist()}

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> LogHistogram:
        pairs = np.asarray(data["buckets"], dtype=np.int64).reshape(-1, 2)
        return cls(int(data["mantissa_bits"]), pairs[:, 0].copy(), pairs[:, 1].copy())

    def __eq__(self, other: object) -> bool:
        return (isinstance(other, LogHistogram) and self.mantissa_bits == other.mantissa_bits
                and np.array_equal(self.indices, other.indices)
                and np.array_equal(self.counts, other.counts))

    # Equal by value over numpy arrays, so not hashable; typeshed wants a method here.
    __hash__ = None  # type: ignore[assignment]


def empty_histogram() -> LogHistogram:
    return LogHistogram(MANTISSA_BITS, np.zeros(0, np.int64), np.zeros(0, np.int64))


def bucket_indices(values: np.ndarray, mantissa_bits: int = MANTISSA_BITS) -> np.ndarray:
    """Signed bucket index of each finite double: sign(x) * (1 + (bits(|x|) >> (52 - m)))."""
    bits = values.view(np.uint64)
    magnitude = (bits & ~_SIGN) >> np.uint64(52 - mantissa_bits)
    index = magnitude.astype(np.int64) + 1
    index[values == 0] = 0
    negative = (bits & _SIGN) != 0
    np.negative(index, out=index, where=negative)
    return index


def histogram_of(values: np.ndarray, maximum: float | None = None) -> LogHistogram:
    """The histogram of finite doubles (the caller keeps NaN and infinities out); passing the
    maximum, when known, saves a pass."""
    if len(values) == 0:
        return empty_histogram()
    if maximum is None:
        maximum = float(values.max())
    indices, counts = [], []
    if maximum >= 0:
        positive_indices, positive_counts, negatives = _positive_counts(values, maximum)
        indices.append(positive_indices)
        counts.append(positive_counts)
    else:
        negatives = True
    if negatives:
        signed = values[np.signbit(values)]  # negatives and -0.0
        if len(signed):
            magnitudes = -signed
            negative_indices, negative_counts, _ = _positive_counts(
                magnitudes, float(magnitudes.max()))
            indices.append(-negative_indices[::-1])  # -0 stays 0, the zero bucket
            counts.append(negative_counts[::-1])
    if len(indices) == 1:
        return LogHistogram(MANTISSA_BITS, indices[0], counts[0])
    return _regroup(MANTISSA_BITS, np.concatenate(indices[::-1]), np.concatenate(counts[::-1]))


def _positive_counts(values: np.ndarray, maximum: float) -> tuple[np.ndarray, np.ndarray, bool]:
    """Counts of the values >= +0.0 by bucket index, and whether any value had its sign set.

    One pass keys the values by bits >> (52 - m); clipping sends every value below 2^-64 (zero
    among them) to the first key and every negative (sign bit set) past the last, and the few
    values in the first key are sorted out exactly afterwards."""
    shift = np.uint64(52 - MANTISSA_BITS)
    low = int(_FLOOR_BITS >> shift)
    high = max(int(np.float64(maximum + 0.0).view(np.uint64) >> shift), low)  # -0.0 is 0.0
    key = values.view(np.uint64) >> shift
    np.clip(key, np.uint64(low), np.uint64(high + 1), out=key)
    key -= np.uint64(low)
    counts = np.bincount(key.view(np.int64), minlength=high - low + 2)
    has_sign = bool(counts[-1])
    counts = counts[:-1]
    present = np.flatnonzero(counts)
    indices = present.astype(np.int64) + low + 1
    tallies = counts[present].astype(np.int64)
    if len(present) and present[0] == 0:  # the floor key: split out zeros and tiny values
        small = values[(values < _FLOOR_VALUE) & ~np.signbit(values)]
        if len(small):
            tallies[0] -= len(small)
            unique, unique_counts = np.unique(bucket_indices(small), return_counts=True)
            indices = np.concatenate([unique, indices])  # all below the floor bucket
            tallies = np.concatenate([unique_counts, tallies])
    kept = tallies > 0
    return indices[kept], tallies[kept], has_sign


_FLOOR_VALUE = 2.0**-64
_FLOOR_BITS = np.float64(_FLOOR_VALUE).view(np.uint64)


def merge_histograms(a: LogHistogram, b: LogHistogram) -> LogHistogram:
    bits = min(a.mantissa_bits, b.mantissa_bits)
    a, b = coarsen(a, bits), coarsen(b, bits)
    merged = LogHistogram(bits, *kernels.merge_sorted_counts(a.indices, a.counts, b.indices,
                                                             b.counts))
    while len(merged.indices) > MAX_BUCKETS:
        merged = coarsen(merged, merged.mantissa_bits - 1)
    return merged


def coarsen(histogram: LogHistogram, mantissa_bits: int) -> LogHistogram:
    """The same counts on the edges of fewer mantissa bits."""
    drop = histogram.mantissa_bits - mantissa_bits
    if drop <= 0:
        return histogram
    if len(histogram.indices) == 0:
        return LogHistogram(mantissa_bits, histogram.indices, histogram.counts)
    index = histogram.indices
    magnitude = (np.abs(index) - 1) >> drop
    coarse = np.where(index == 0, 0, np.sign(index) * (magnitude + 1))
    # The coarse index grows with the fine one, so equal coarse indices are neighbours.
    starts = np.flatnonzero(np.concatenate([[True], coarse[1:] != coarse[:-1]]))
    return LogHistogram(mantissa_bits, coarse[starts].astype(np.int64),
                        np.add.reduceat(histogram.counts, starts).astype(np.int64))


def _regroup(bits: int, indices: np.ndarray, counts: np.ndarray) -> LogHistogram:
    """Counts summed per index, indices sorted (a stable sort merges sorted runs in one pass)."""
    if len(indices) == 0:
        return LogHistogram(bits, np.zeros(0, np.int64), np.zeros(0, np.int64))
    order = np.argsort(indices, kind="stable")
    indices, counts = indices[order], counts[order]
    starts = np.flatnonzero(np.concatenate([[True], indices[1:] != indices[:-1]]))
    return LogHistogram(bits, indices[starts].astype(np.int64),
                        np.add.reduceat(counts, starts).astype(np.int64))


def bucket_bounds(histogram: LogHistogram) -> tuple[np.ndarray, np.ndarray]:
    """Lower and upper value of each bucket, in increasing order of value."""
    index = histogram.indices
    shift = np.uint64(52 - histogram.mantissa_bits)
    magnitude = (np.abs(index) - 1).astype(np.uint64)
    low = (magnitude << shift).view(np.float64)
    high = ((magnitude + np.uint64(1)) << shift).view(np.float64)
    lower = np.where(index > 0, low, np.where(index < 0, -high, 0.0))
    upper = np.where(index > 0, high, np.where(index < 0, -low, 0.0))
    return lower, upper


def quantiles(histogram: LogHistogram, qs: np.ndarray, minimum: float,
              maximum: float) -> np.ndarray:
    """Value at each rank q(n-1): the middle of the bucket holding it, kept within [min, max]."""
    if histogram.total == 0:
        return np.full(len(qs), np.nan)
    cumulative = np.cumsum(histogram.counts)
    ranks = np.asarray(qs) * (cumulative[-1] - 1)
    position = np.searchsorted(cumulative, ranks, side="right")
    lower, upper = bucket_bounds(histogram)
    middle = (lower[position] + upper[position]) / 2
    return np.clip(middle, minimum, maximum)


def aligned_masses(a: LogHistogram, b: LogHistogram) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Both histograms on shared edges: bucket indices and the counts of each."""
    bits = min(a.mantissa_bits, b.mantissa_bits)
    a, b = coarsen(a, bits), coarsen(b, bits)
    union = np.union1d(a.indices, b.indices)
    counts_a = np.zeros(len(union), np.int64)
    counts_b = np.zeros(len(union), np.int64)
    counts_a[np.searchsorted(union, a.indices)] = a.counts
    counts_b[np.searchsorted(union, b.indices)] = b.counts
    return union, counts_a, counts_b
