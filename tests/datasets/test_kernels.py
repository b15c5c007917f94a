"""The compiled kernels give exactly what the numpy definitions give.

The definitions are hashing.contributions / finish / digest_of_lanes (docs/canonical-values.md),
histogram.histogram_of and histogram._regroup, and numpy's own mean and variance; the kernels
only do the same arithmetic in fewer passes.
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import numpy as np
import pyarrow as pa
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from registry.datasets import hashing, kernels
from registry.datasets.histogram import _regroup, histogram_of, merge_histograms
from registry.datasets.numeric_columns import summarise_numbers
from registry.datasets.sketch import DEFAULT_K, add_hashes, empty_sketch
from registry.datasets.types import ValueType

REPOSITORY = Path(__file__).parents[2]
SPECIAL_DOUBLES = [0.0, -0.0, float("nan"), float("inf"), float("-inf"), 5e-324, -5e-324,
                   1e-300, -1e-300, 2.0**-64, -(2.0**-64), 1e308, -1e308, 1.0, -1.0]
doubles = st.one_of(st.floats(allow_nan=True, allow_infinity=True), st.sampled_from(SPECIAL_DOUBLES))
longs = st.integers(-(2**63), 2**63 - 1)


def kernel_contributions(array: pa.Array, value_type: ValueType, name: str):
    sums0 = np.zeros(len(array), np.uint64)
    sums1 = np.zeros(len(array), np.uint64)
    summary = summarise_numbers(array, hashing.hash_target(value_type, name, sums0, sums1))
    return sums0, sums1, summary


def assert_summary_matches_numpy(summary, values: list, is_integer: bool):
    present = [v for v in values if v is not None]
    floats = np.asarray(present, dtype=np.float64)
    finite = floats[np.isfinite(floats)]
    assert summary.count == len(finite)
    assert summary.non_finite == len(floats) - len(finite)
    assert summary.histogram == histogram_of(finite)  # histogram.py's numpy definition
    if len(finite) == 0:
        assert summary.minimum is None and summary.maximum is None
        return
    if is_integer:  # the range of integers is exact, not rounded through doubles
        assert (summary.minimum, summary.maximum) == (min(present), max(present))
    else:
        assert (summary.minimum, summary.maximum) == (finite.min(), finite.max())
    with np.errstate(over="ignore", invalid="ignore"):
        mean, m2 = np.mean(finite), np.var(finite) * len(finite)  # reference: numpy
        # Sums in another order round differently: by at most a few ulps of the magnitudes
        # summed, which is large beside the result when large values cancel.
        scale, square_scale = np.mean(np.abs(finite)), np.sum(finite * finite)
    if np.isfinite(mean) and np.isfinite(m2) and np.isfinite(square_scale):
        assert summary.mean == pytest.approx(mean, rel=1e-12, abs=1e-13 * scale + 1e-300)
        assert summary.m2 == pytest.approx(m2, rel=1e-9, abs=1e-12 * square_scale + 1e-300)


def check_column_against_numpy(values: list, offset: int, avro: str, name: str) -> None:
    arrow_type = pa.float64() if avro == "double" else pa.int64()
    array = pa.array(values, type=arrow_type).slice(min(offset, len(values)))
    value_type = ValueType(avro, nullable=True)
    sums0, sums1, summary = kernel_contributions(array, value_type, name)
    c0, c1 = hashing.contributions(array, value_type, name)
    assert np.array_equal(sums0, c0) and np.array_equal(sums1, c1)
    assert_summary_matches_numpy(summary, array.to_pylist(), is_integer=avro == "long")


@settings(max_examples=150, deadline=None)
@given(st.lists(st.one_of(st.none(), doubles), max_size=300), st.integers(0, 5))
def test_double_columns_hash_and_summarise_as_the_numpy_definitions(values, offset):
    check_column_against_numpy(values, offset, "double", "pressure_kpa")


@settings(max_examples=150, deadline=None)
@given(st.lists(st.one_of(st.none(), longs), max_size=300), st.integers(0, 5))
def test_long_columns_hash_and_summarise_as_the_numpy_definitions(values, offset):
    check_column_against_numpy(values, offset, "long", "repairs_5y")


def test_moments_of_a_large_column_match_numpy():
    values = np.random.default_rng(11).normal(1e6, 3.0, 500_003)
    summary = summarise_numbers(pa.array(values))
    # reference: numpy's pairwise mean and var (ddof=0)
    assert summary.mean == pytest.approx(np.mean(values), rel=1e-13)
    assert summary.m2 / len(values) == pytest.approx(np.var(values), rel=1e-10)
    assert summary.histogram == histogram_of(values)


def test_contributions_add_to_sums_already_there():
    array = pa.array([1.5, None, -2.0])
    value_type = ValueType("double", nullable=True)
    sums0 = np.full(3, 7, np.uint64)
    sums1 = np.full(3, 9, np.uint64)
    summarise_numbers(array, hashing.hash_target(value_type, "x", sums0, sums1))
    c0, c1 = hashing.contributions(array, value_type, "x")
    assert np.array_equal(sums0, c0 + np.uint64(7)) and np.array_equal(sums1, c1 + np.uint64(9))


@settings(max_examples=50, deadline=None)
@given(st.lists(st.integers(0, 2**64 - 1), min_size=0, max_size=200))
def test_record_hashes_and_their_digest_match_finish_and_digest_of_lanes(words):
    sums0 = np.asarray(words, dtype=np.uint64)
    sums1 = sums0[::-1].copy()
    lane0, lane1, digest = hashing.finish_records(sums0, sums1)
    expected = hashing.finish((sums0, sums1), hashing.RECORD)
    assert np.array_equal(lane0, expected[0]) and np.array_equal(lane1, expected[1])
    assert digest == hashing.digest_of_lanes(*expected)


@settings(max_examples=100, deadline=None)
@given(st.lists(st.tuples(st.integers(-50, 50), st.integers(1, 9)), max_size=40),
       st.lists(st.tuples(st.integers(-50, 50), st.integers(1, 9)), max_size=40))
def test_merging_sorted_counts_equals_regrouping_their_concatenation(a, b):
    def sorted_pairs(pairs):
        merged = dict()
        for index, count in pairs:
            merged[index] = merged.get(index, 0) + count
        keys = np.array(sorted(merged), np.int64)
        return keys, np.array([merged[k] for k in keys], np.int64)

    (ai, ac), (bi, bc) = sorted_pairs(a), sorted_pairs(b)
    indices, counts = kernels.merge_sorted_counts(ai, ac, bi, bc)
    reference = _regroup(7, np.concatenate([ai, bi]), np.concatenate([ac, bc]))
    assert np.array_equal(indices, reference.indices)
    assert np.array_equal(counts, reference.counts)


def test_merged_histograms_of_two_halves_equal_the_histogram_of_the_whole():
    values = np.random.default_rng(12).standard_cauchy(50_000)
    halves = merge_histograms(histogram_of(values[:20_000]), histogram_of(values[20_000:]))
    whole = merge_histograms(histogram_of(np.zeros(0)), histogram_of(values))
    assert halves == whole


@pytest.mark.parametrize("hashes", [
    np.random.default_rng(13).integers(0, 2**64, 100_000, dtype=np.uint64),
    # hashes far from uniform: the quick bound finds too few and the sketch looks at them all
    np.concatenate([np.full(50_000, 2**63, np.uint64),
                    np.arange(500, dtype=np.uint64) + np.uint64(2**62)]),
    np.repeat(np.random.default_rng(14).integers(0, 2**64, 3_000, dtype=np.uint64), 30),
])
def test_bottom_k_sketch_keeps_the_k_smallest_distinct_hashes(hashes):
    sketch = add_hashes(empty_sketch(), hashes)
    assert np.array_equal(sketch.values, np.unique(hashes)[:DEFAULT_K])


def test_the_command_loads_the_compiler_only_when_a_kernel_runs():
    """numba takes a third of a second to import; `lockkeeper schema check` never needs it."""
    script = ("import sys, registry.cli; print('numba' in sys.modules)\n"
              "from registry.datasets.numeric_columns import summarise_numbers\n"
              "import pyarrow as pa; summarise_numbers(pa.array([1.0, 2.0]))\n"
              "print('numba' in sys.modules)\n")
    done = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True,
                          check=True, cwd=REPOSITORY)
    assert done.stdout.split() == ["False", "True"]
