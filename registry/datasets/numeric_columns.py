"""One numeric column of one batch: its hash contributions and its summary.

The shell between Arrow arrays and the compiled kernel (kernels.summarise_column): it finds the
column's buffers without copying them and wraps what the kernel returns.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from registry.datasets.histogram import MANTISSA_BITS, LogHistogram, empty_histogram
from registry.lazy_import import lazy_import

kernels = lazy_import("registry.datasets.kernels")  # loads numba on first use

_SHIFT = np.uint64(52 - MANTISSA_BITS)
FLOOR_VALUE = 2.0**-64  # magnitudes below this are bucketed one by one


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


_NO_MASK = np.zeros(0, np.uint8)
_NO_SUMS = np.zeros(0, np.uint64)
_NO_TARGET = HashTarget(_NO_SUMS, _NO_SUMS, *(np.uint64(0),) * 4)


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
    dtype = np.float64 if floating else np.int64
    values = np.zeros(0, dtype)
    if len(array):  # a null's slot holds any value
        data = array.buffers()[1]
        assert data is not None  # a non-empty numeric array has its data buffer
        values = np.frombuffer(memoryview(data), dtype=dtype)[array.offset:
                                                              array.offset + len(array)]
    valid = (pc.is_valid(array).to_numpy(zero_copy_only=False).view(np.uint8)
             if array.null_count else _NO_MASK)
    target = target or _NO_TARGET
    non_finite = kernels.add_contributions(
        values.view(np.uint64), floating, valid, target.sums0, target.sums1, target.key0,
        target.multiplier, target.null0, target.null1)
    if array.null_count or non_finite:  # the summary is of the finite values alone
        counted = valid.view(np.bool_) if array.null_count else np.ones(len(values), np.bool_)
        if non_finite:
            counted &= np.isfinite(values)
        values = values[counted]
    if len(values) == 0:
        return NumericSummary(0, 0.0, 0.0, None, None, int(non_finite), empty_histogram())
    floats = values if floating else values.astype(np.float64)
    mean, m2, low, high, indices, counts = kernels.summarise_finite(values, floats, _SHIFT,
                                                                    FLOOR_VALUE)
    return NumericSummary(len(values), float(mean), float(m2), _plain(low, floating),
                          _plain(high, floating), int(non_finite),
                          LogHistogram(MANTISSA_BITS, indices, counts))


def _plain(number: float | int | np.number, floating: bool) -> float | int:
    return float(number) if floating else int(number)
