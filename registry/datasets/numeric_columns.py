"""One numeric column of one batch: its hash contributions and its summary.

The shell between Arrow arrays and the compiled kernels (kernels.py): it finds the column's
buffers without copying them, takes the moments from numpy's pairwise sums, and turns the
kernels' bucket table into a LogHistogram equal to histogram.histogram_of's.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from registry.datasets import kernels
from registry.datasets.histogram import (MANTISSA_BITS, LogHistogram, bucket_indices,
                                         empty_histogram)

_SHIFT = np.uint64(52 - MANTISSA_BITS)
FLOOR_VALUE = 2.0**-64  # magnitudes below this are bucketed one by one
_FLOOR_KEY = int(np.float64(FLOOR_VALUE).view(np.uint64) >> _SHIFT)
_NO_MASK = np.zeros(0, np.uint8)


@dataclass(frozen=True)
class NumericSummary:
    """Count, mean, M2 (sum of squared deviations) and range of the finite values (the range
    exact for integers), the count of NaN and infinities, and the histogram."""

    count: int
    mean: float
    m2: float
    minimum: float | int | None
    maximum: float | int | None
    non_finite: int
    histogram: LogHistogram


@dataclass(frozen=True)
class HashTarget:
    """Where a column's contributions go: the record sums per lane, the field's first lane key,
    the second lane's multiplier K1 | 1, and the contributions of a null."""

    sums0: np.ndarray
    sums1: np.ndarray
    key0: np.uint64
    multiplier: np.uint64
    null0: np.uint64
    null1: np.uint64


def is_plain_number_column(array: pa.Array) -> bool:
    """Integer or floating-point arrays: one word a value, for the kernels."""
    return pa.types.is_integer(array.type) or pa.types.is_floating(array.type)


def summarise_numbers(array: pa.Array | pa.ChunkedArray,
                      target: HashTarget | None = None) -> NumericSummary:
    """The summary of a numeric column; given a target, its contributions are added there."""
    if isinstance(array, pa.ChunkedArray):
        array = array.combine_chunks()
    floating = pa.types.is_floating(array.type)
    wanted = pa.float64() if floating else pa.int64()
    if array.type != wanted:
        array = array.cast(wanted)
    if target is not None:
        _add_contributions(array, floating, target)
    present = pc.drop_null(array) if array.null_count else array
    numbers = present.to_numpy(zero_copy_only=False)
    floats = numbers.astype(np.float64, copy=False)
    non_finite = 0
    if floating and len(floats) and not (np.isfinite(floats.min())
                                         and np.isfinite(floats.max())):
        finite = np.isfinite(floats)  # min and max are finite only when every value is
        non_finite = int(len(floats) - np.count_nonzero(finite))
        floats = numbers = floats[finite]
    if len(floats) == 0:
        return NumericSummary(0, 0.0, 0.0, None, None, non_finite, empty_histogram())
    low, high = numbers.min().item(), numbers.max().item()
    mean = float(floats.mean())  # numpy's pairwise sum
    m2, histogram = _squares_and_histogram(floats, mean, float(low), float(high))
    return NumericSummary(len(floats), mean, m2, low, high, non_finite, histogram)


def _add_contributions(array: pa.Array, floating: bool, target: HashTarget) -> None:
    data = array.buffers()[1]
    dtype = np.float64 if floating else np.int64
    values = (np.frombuffer(data, dtype=dtype)[array.offset:array.offset + len(array)]
              if len(array) else np.zeros(0, dtype))
    valid = (pc.is_valid(array).to_numpy(zero_copy_only=False).view(np.uint8)
             if array.null_count else _NO_MASK)
    kernels.add_contributions(values.view(np.uint64), floating, valid, target.key0,
                              target.multiplier, target.null0, target.null1, target.sums0,
                              target.sums1)


def _top_key(magnitude: float) -> int:
    """How many table slots a sign needs to reach this magnitude's bucket."""
    if not magnitude >= FLOOR_VALUE:
        return 0
    return int(np.float64(magnitude).view(np.uint64) >> _SHIFT) - (_FLOOR_KEY - 1)


def _squares_and_histogram(floats: np.ndarray, mean: float, low: float,
                           high: float) -> tuple[float, LogHistogram]:
    negative_slots, positive_slots = _top_key(-low), _top_key(high)
    m2, zeros, table = kernels.bucket_counts(floats, mean, _SHIFT, _FLOOR_KEY, negative_slots,
                                             positive_slots)
    negative_counts = table[:negative_slots]
    positive_counts = table[negative_slots + 1:]
    # Slot k away from the middle holds magnitude key FLOOR_KEY - 1 + k, index +-(FLOOR_KEY + k).
    negative_indices = -(_FLOOR_KEY + np.arange(negative_slots, 0, -1, dtype=np.int64))
    positive_indices = _FLOOR_KEY + np.arange(1, positive_slots + 1, dtype=np.int64)
    tiny_indices, tiny_counts = np.zeros(0, np.int64), np.zeros(0, np.int64)
    if table[negative_slots] > zeros:  # values below the floor, bucketed one by one
        tiny = floats[(np.abs(floats) < FLOOR_VALUE) & (floats != 0.0)]
        tiny_indices, tiny_counts = np.unique(bucket_indices(tiny), return_counts=True)
    zero_index = np.zeros(1 if zeros else 0, np.int64)
    below = tiny_indices < 0
    indices = np.concatenate([negative_indices, tiny_indices[below], zero_index,
                              tiny_indices[~below], positive_indices])
    counts = np.concatenate([negative_counts, tiny_counts[below],
                             np.full(len(zero_index), zeros, np.int64), tiny_counts[~below],
                             positive_counts])
    kept = counts > 0
    return float(m2), LogHistogram(MANTISSA_BITS, indices[kept].astype(np.int64),
                                   counts[kept].astype(np.int64))
