"""Bottom-k sketches: estimates within 3/sqrt(k) of exact values on sets of known overlap."""

from __future__ import annotations

import math

import numpy as np
import pytest

from registry.datasets import containment, intersection, jaccard, overlap
from registry.datasets.sketch import DEFAULT_K, merge_sketches, sketch_of

K = DEFAULT_K
BOUND = 3 / math.sqrt(K)  # Broder 1997; Cohen and Kaplan 2007: relative error about 1/sqrt(k)


def hashed(ids: np.ndarray) -> np.ndarray:
    """Record-hash stand-ins: a fixed bijective mix of the ids (splitmix64 finaliser)."""
    from registry.datasets.hashing import mix64

    return mix64(ids.astype(np.uint64) * np.uint64(0x9E3779B97F4A7C15) + np.uint64(7))


@pytest.mark.parametrize("size_a, size_b, shared", [
    (50_000, 50_000, 25_000), (100_000, 20_000, 15_000), (20_000, 100_000, 2_000),
    (30_000, 30_000, 0), (40_000, 40_000, 40_000)])
def test_estimates_are_within_three_over_root_k_of_the_exact_values(size_a, size_b, shared):
    a_ids = np.arange(size_a)
    b_ids = np.arange(size_a - shared, size_a - shared + size_b)
    a, b = sketch_of(hashed(a_ids)), sketch_of(hashed(b_ids))
    union = size_a + size_b - shared
    assert abs(jaccard(a, b) - shared / union) <= BOUND
    assert abs(containment(a, b) - shared / size_b) <= BOUND
    assert abs(intersection(a, b) - shared) <= BOUND * union
    found = overlap(a, b)
    assert abs(found.distinct_a - size_a) <= BOUND * size_a
    assert 0 < found.jaccard_error_bound <= BOUND


def test_small_sets_are_listed_whole_and_compared_exactly():
    a, b = sketch_of(hashed(np.arange(300))), sketch_of(hashed(np.arange(200, 600)))
    found = overlap(a, b)
    assert found.is_exact
    assert found.jaccard == 100 / 600
    assert found.containment == 100 / 400
    assert found.intersection == 100
    assert found.jaccard_error_bound == 0


def test_sketches_merge_into_the_sketch_of_the_union():
    values = hashed(np.arange(30_000))
    merged = merge_sketches(sketch_of(values[:10_000]), sketch_of(values[10_000:]))
    assert merged == sketch_of(values)


def test_repeated_hashes_count_once():
    values = hashed(np.arange(5_000))
    assert sketch_of(np.concatenate([values, values])) == sketch_of(values)
