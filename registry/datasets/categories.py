"""Mergeable category counts: exact up to a cap, a Misra-Gries heavy-hitters summary beyond it.

Misra and Gries (1982) with the merge of Agarwal et al., Mergeable Summaries (PODS 2012): add the
counters, then subtract the (cap+1)-th largest count from all and keep the positive ones. Each
count kept is then low by at most (N - sum of counts kept) / (cap + 1), N the values counted,
which holds whatever order partitions were merged in.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, cast

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

CATEGORY_CAP = 256


@dataclass(frozen=True)
class CategoryCounts:
    values: tuple[str, ...]
    counts: tuple[int, ...]
    is_exact: bool = True
    total: int = 0  # non-null values counted
    cap: int = CATEGORY_CAP

    @property
    def error_bound(self) -> int:
        """How much any count may be short (Agarwal et al. 2012, Misra-Gries merge)."""
        if self.is_exact:
            return 0
        return (self.total - sum(self.counts)) // (self.cap + 1)

    def as_dict(self) -> dict[str, int]:
        return dict(zip(self.values, self.counts, strict=True))

    def to_dict(self) -> dict[str, Any]:
        order = sorted(range(len(self.values)), key=lambda i: (-self.counts[i], self.values[i]))
        return {"exact": self.is_exact, "error_bound": self.error_bound, "cap": self.cap,
                "total": self.total, "counts": {self.values[i]: self.counts[i] for i in order}}

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> CategoryCounts:
        pairs = sorted((str(v), int(c)) for v, c in data["counts"].items())
        return cls(tuple(v for v, _ in pairs), tuple(c for _, c in pairs),
                   bool(data["exact"]), int(data["total"]), int(data["cap"]))


def empty_counts(cap: int = CATEGORY_CAP) -> CategoryCounts:
    return CategoryCounts((), (), True, 0, cap)


def counts_of(array: pa.Array, cap: int = CATEGORY_CAP) -> CategoryCounts:
    """Counts of the non-null values of a string or boolean column batch."""
    if pa.types.is_boolean(array.type):
        array = pc.if_else(array, "true", "false")
    array = pc.drop_null(array)
    encoded = _dictionary_encoded(array)
    tally = np.bincount(encoded.indices.to_numpy(zero_copy_only=False),
                        minlength=len(encoded.dictionary))
    return _reduced(encoded.dictionary, tally, True, len(array), cap)


def merge_counts(a: CategoryCounts, b: CategoryCounts) -> CategoryCounts:
    cap = max(a.cap, b.cap)
    values = pa.array(a.values + b.values, type=pa.string())
    encoded = _dictionary_encoded(values)
    tally = np.bincount(encoded.indices.to_numpy(zero_copy_only=False),
                        weights=np.asarray(a.counts + b.counts, dtype=np.float64),
                        minlength=len(encoded.dictionary)).astype(np.int64)
    return _reduced(encoded.dictionary, tally, a.is_exact and b.is_exact, a.total + b.total, cap)


def _dictionary_encoded(array: pa.Array) -> pa.DictionaryArray:
    if pa.types.is_dictionary(array.type):
        encoded = cast(pa.DictionaryArray, array)
        # A file's dictionary may repeat a value (nothing in Parquet forbids it): count by
        # value then, not by dictionary entry. Unused entries are dropped by their zero count.
        if len(pc.unique(encoded.dictionary)) == len(encoded.dictionary):
            return encoded
        array = encoded.dictionary_decode()
    return cast(pa.DictionaryArray, pc.dictionary_encode(array))


def _reduced(values: pa.Array, tally: np.ndarray, is_exact: bool, total: int,
             cap: int) -> CategoryCounts:
    keep = tally > 0
    if int(keep.sum()) > cap:
        # Misra-Gries step: subtract the (cap+1)-th largest count from every counter.
        threshold = int(np.partition(tally, len(tally) - cap - 1)[len(tally) - cap - 1])
        tally = tally - threshold
        keep = tally > 0
        is_exact = False
    chosen = np.flatnonzero(keep)
    # The values are text: the column's own, or "true" and "false" for a boolean column.
    names = cast(list[str], values.take(chosen).to_pylist()) if len(chosen) else []
    # One order, whatever the merges.
    pairs = sorted(zip(names, (int(c) for c in tally[chosen]), strict=True))
    return CategoryCounts(tuple(n for n, _ in pairs), tuple(c for _, c in pairs), is_exact,
                          total, cap)
