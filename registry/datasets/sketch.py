"""Bottom-k sketches of record hashes and the overlap they estimate.

A bottom-k sketch keeps the k smallest distinct 64-bit record hashes (Broder 1997; Cohen and
Kaplan, Summarizing Data using Bottom-k Sketches, PODC 2007). Below the smaller of two sketches'
thresholds both sets are known exactly, so the records hashed there are a uniform sample of the
union and the shares below are estimates with relative error about 1/sqrt(k). The distinct count
is Beyer et al.'s (k-1)/U(k) (SIGMOD 2007).
"""

from __future__ import annotations

import base64
import math
from dataclasses import dataclass
from typing import Any

import numpy as np

DEFAULT_K = 1024
_FULL = 2.0**64


@dataclass(frozen=True)
class BottomKSketch:
    k: int
    values: np.ndarray  # uint64, sorted, distinct, at most k

    @property
    def is_full(self) -> bool:
        """Holds k values, so it samples the set rather than listing it."""
        return len(self.values) >= self.k

    @property
    def threshold(self) -> int:
        """Hashes at or below this are all in the sketch (2^64 - 1 when it lists the whole set)."""
        return int(self.values[-1]) if self.is_full else (1 << 64) - 1

    def distinct(self) -> float:
        if not self.is_full:
            return float(len(self.values))
        return (self.k - 1) / ((float(self.values[-1]) + 1.0) / _FULL)

    def to_dict(self) -> dict[str, Any]:
        return {"k": self.k, "distinct_estimate": round(self.distinct(), 3),
                "exact": not self.is_full,
                "hashes": base64.b64encode(self.values.astype("<u8").tobytes()).decode("ascii")}

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> BottomKSketch:
        raw = base64.b64decode(data["hashes"])
        return cls(int(data["k"]), np.frombuffer(raw, dtype="<u8").astype(np.uint64))

    def __eq__(self, other: object) -> bool:
        return (isinstance(other, BottomKSketch) and self.k == other.k
                and np.array_equal(self.values, other.values))

    # Equal by value over numpy arrays, so not hashable; typeshed wants a method here.
    __hash__ = None  # type: ignore[assignment]


def empty_sketch(k: int = DEFAULT_K) -> BottomKSketch:
    return BottomKSketch(k, np.zeros(0, dtype=np.uint64))


def add_hashes(sketch: BottomKSketch, hashes: np.ndarray) -> BottomKSketch:
    """The sketch of the set plus these hashes; only hashes below the threshold are looked at."""
    candidates = hashes[hashes < np.uint64(sketch.threshold)] if sketch.is_full else hashes
    if len(candidates) > 8 * sketch.k:
        # Record hashes are uniform on [0, 2^64), so the k smallest of n lie below 4k/n of the
        # range with overwhelming probability; when k distinct values do lie below, the k
        # smallest are exactly among them, and one comparison saves a partition of all n.
        bound = np.uint64(min(2**64 - 1, (4 * sketch.k * 2**64) // len(candidates)))
        below = _distinct(candidates[candidates < bound])
        if len(below) >= sketch.k:
            candidates = below
    if len(candidates) == 0:
        return sketch
    if len(candidates) > 4 * sketch.k:
        smallest = np.partition(candidates, sketch.k)[: sketch.k + 1]
        distinct = _distinct(smallest)
        if len(distinct) < sketch.k:  # repeats among the smallest: look at them all
            distinct = _distinct(candidates)
        candidates = distinct
    return merge_sketches(sketch, BottomKSketch(sketch.k, _distinct(candidates)[: sketch.k]))


def _distinct(values: np.ndarray) -> np.ndarray:
    """Sorted distinct values (np.unique, by one sort; its hashing path is slower here)."""
    ordered = np.sort(values)
    if len(ordered) < 2:
        return ordered
    return ordered[np.concatenate([[True], ordered[1:] != ordered[:-1]])]


def sketch_of(hashes: np.ndarray, k: int = DEFAULT_K) -> BottomKSketch:
    return add_hashes(empty_sketch(k), hashes)


def merge_sketches(a: BottomKSketch, b: BottomKSketch) -> BottomKSketch:
    k = min(a.k, b.k)
    if len(a.values) == 0 or len(b.values) == 0:
        return BottomKSketch(k, (b.values if len(a.values) == 0 else a.values)[:k])
    return BottomKSketch(k, _distinct(np.concatenate([a.values, b.values]))[:k])


@dataclass(frozen=True)
class Overlap:
    """How far two record sets coincide; containment is the share of B's records also in A."""

    jaccard: float
    containment: float
    intersection: float
    distinct_a: float
    distinct_b: float
    is_exact: bool
    jaccard_error_bound: float
    containment_error_bound: float
    sample_size: int

    def to_dict(self) -> dict[str, Any]:
        return {"jaccard": self.jaccard, "containment": self.containment,
                "intersection": self.intersection, "distinct_a": self.distinct_a,
                "distinct_b": self.distinct_b, "exact": self.is_exact,
                "jaccard_error_bound": self.jaccard_error_bound,
                "containment_error_bound": self.containment_error_bound,
                "sample_size": self.sample_size}


def overlap(a: BottomKSketch, b: BottomKSketch) -> Overlap:
    """Jaccard, containment of B in A and intersection size from two sketches.

    The error bounds are 1/sqrt(n) for a share estimated from n sampled records: two standard
    errors in the worst case p = 1/2, and 0 when both sketches list their sets whole.
    """
    threshold = min(a.threshold, b.threshold)
    limit = np.uint64(threshold)
    in_a = a.values[a.values <= limit]
    in_b = b.values[b.values <= limit]
    union = len(np.union1d(in_a, in_b))
    common = len(np.intersect1d(in_a, in_b, assume_unique=True))
    exact = not a.is_full and not b.is_full
    jaccard = common / union if union else 0.0
    contained = common / len(in_b) if len(in_b) else 0.0
    fraction = 1.0 if exact else (threshold + 1.0) / _FULL
    return Overlap(
        jaccard=jaccard, containment=contained, intersection=common / fraction,
        distinct_a=a.distinct(), distinct_b=b.distinct(), is_exact=exact,
        jaccard_error_bound=0.0 if exact or not union else 1 / math.sqrt(union),
        containment_error_bound=0.0 if exact or not len(in_b) else 1 / math.sqrt(len(in_b)),
        sample_size=union)


def jaccard(a: BottomKSketch, b: BottomKSketch) -> float:
    return overlap(a, b).jaccard


def containment(a: BottomKSketch, b: BottomKSketch) -> float:
    """Estimated share of the records of B that also occur in A."""
    return overlap(a, b).containment


def intersection(a: BottomKSketch, b: BottomKSketch) -> float:
    return overlap(a, b).intersection
