"""Mergeable per-column profiles: counts, moments, histogram and quantiles, category counts.

Means and variances merge by the pairwise update of Chan, Golub and LeVeque (Updating Formulae
and a Pairwise Algorithm for Computing Sample Variances, 1979), so partitions combine in any order.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import Any, cast

import numpy as np
import pyarrow as pa

from registry.datasets.categories import (
    CATEGORY_CAP,
    CategoryCounts,
    counts_of,
    empty_counts,
    merge_counts,
)
from registry.datasets.histogram import LogHistogram, empty_histogram, merge_histograms, quantiles
from registry.datasets.numeric_columns import HashTarget, summarise_numbers
from registry.datasets.types import NUMERIC, ValueType

QUANTILE_LEVELS = (0.01, 0.05, 0.25, 0.5, 0.75, 0.95, 0.99)


@dataclass(frozen=True)
class Moments:
    """Count, mean and sum of squared deviations (M2) of the finite values, with their range."""

    count: int = 0
    mean: float = 0.0
    m2: float = 0.0
    minimum: float | int | None = None
    maximum: float | int | None = None

    @property
    def variance(self) -> float | None:
        """Population variance M2 / n (numpy's var with ddof=0)."""
        return self.m2 / self.count if self.count else None


def merge_moments(a: Moments, b: Moments) -> Moments:
    if a.count == 0:
        return b
    if b.count == 0:
        return a
    # A summary of at least one value has its range.
    assert a.minimum is not None and a.maximum is not None
    assert b.minimum is not None and b.maximum is not None
    count = a.count + b.count
    delta = b.mean - a.mean
    # Chan, Golub and LeVeque (1979), equation 2.1b
    mean = a.mean + delta * b.count / count
    m2 = a.m2 + b.m2 + delta * delta * a.count * b.count / count
    return Moments(count, mean, m2, min(a.minimum, b.minimum), max(a.maximum, b.maximum))


@dataclass(frozen=True)
class ColumnProfile:
    """What one column holds; every part merges with the same part of another partition."""

    avro_type: str
    count: int = 0  # rows, nulls included
    nulls: int = 0
    is_union: bool = False
    moments: Moments | None = None  # numeric columns
    non_finite: int = 0  # NaN and infinities, kept out of the moments and histogram
    histogram: LogHistogram | None = None
    categories: CategoryCounts | None = None  # string, enum and boolean columns
    symbols: tuple[str, ...] = ()  # enum symbols, counted even when absent
    branch_names: tuple[str, ...] = ()  # a union of several types: null, then each branch
    branch_tally: tuple[int, ...] = ()  # values per branch, in the order of branch_names

    def branch_counts(self) -> dict[str, int] | None:
        if self.branch_names:
            return dict(zip(self.branch_names, self.branch_tally, strict=True))
        if not self.is_union:
            return None
        return {"null": self.nulls, self.avro_type: self.count - self.nulls}

    def symbol_counts(self) -> dict[str, int] | None:
        if not self.symbols or self.categories is None:
            return None
        seen = self.categories.as_dict()
        return {symbol: seen.get(symbol, 0) for symbol in self.symbols}

    def quantiles(self) -> dict[str, float] | None:
        if self.histogram is None or self.moments is None or self.moments.count == 0:
            return None
        low, high = self.moments.minimum, self.moments.maximum
        assert low is not None and high is not None  # a summary of at least one value
        values = quantiles(self.histogram, np.asarray(QUANTILE_LEVELS), float(low), float(high))
        if self.avro_type in ("int", "long"):  # an integer column's quantiles are integers
            return {f"{q:g}": int(round(v)) for q, v in zip(QUANTILE_LEVELS, values, strict=True)}
        return {f"{q:g}": float(v) for q, v in zip(QUANTILE_LEVELS, values, strict=True)}

    def to_dict(self) -> dict[str, Any]:
        document: dict[str, Any] = {"type": self.avro_type, "count": self.count,
                                    "nulls": self.nulls}
        if self.is_union:
            document["branches"] = self.branch_counts()
        if self.moments is not None:
            m = self.moments
            document.update({
                "min": m.minimum, "max": m.maximum,
                "mean": m.mean if m.count else None, "variance": m.variance,
                "m2": m.m2, "finite": m.count, "non_finite": self.non_finite,
                "quantiles": self.quantiles(),
                "histogram": self.histogram.to_dict() if self.histogram else None,
            })
        if self.categories is not None:
            document["categories"] = self.categories.to_dict()
        if self.symbols:
            document["symbols"] = self.symbol_counts()
        return document

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> ColumnProfile:
        moments = histogram = categories = None
        if "mean" in data:
            moments = Moments(int(data["finite"]), float(data["mean"] or 0.0),
                              float(data["m2"]), data["min"], data["max"])
            histogram = LogHistogram.from_dict(data["histogram"]) if data["histogram"] else None
        if "categories" in data:
            categories = CategoryCounts.from_dict(data["categories"])
        branches = data.get("branches") or {}
        several = data["type"] == "union"
        return cls(avro_type=data["type"], count=int(data["count"]), nulls=int(data["nulls"]),
                   is_union="branches" in data, moments=moments,
                   branch_names=tuple(branches) if several else (),
                   branch_tally=tuple(int(c) for c in branches.values()) if several else (),
                   non_finite=int(data.get("non_finite", 0)), histogram=histogram,
                   categories=categories, symbols=tuple(data.get("symbols") or ()))


def empty_profile(value_type: ValueType) -> ColumnProfile:
    numeric = value_type.avro in NUMERIC
    categorical = value_type.avro in ("string", "enum", "boolean")
    cap = max(CATEGORY_CAP, len(value_type.symbols))
    return ColumnProfile(
        avro_type=value_type.avro, is_union=value_type.is_union,
        moments=Moments() if numeric else None,
        histogram=empty_histogram() if numeric else None,
        categories=empty_counts(cap) if categorical else None,
        symbols=value_type.symbols,
        branch_names=value_type.branch_names if value_type.avro == "union" else (),
        branch_tally=(0,) * len(value_type.branch_names) if value_type.avro == "union" else ())


def profile_of(array: pa.Array, value_type: ValueType,
               hash_into: HashTarget | None = None) -> ColumnProfile:
    """The profile of one batch of one column. A numeric column's hash contributions are
    added to `hash_into` in the same passes, when given."""
    if isinstance(array, pa.ChunkedArray):
        array = array.combine_chunks()
    base = empty_profile(value_type)
    if value_type.avro == "union":  # unions hold their nulls in branch 0, not a validity bitmap
        tally = np.bincount(np.asarray(cast(pa.UnionArray, array).type_codes),
                            minlength=len(base.branch_names))
        return replace(base, count=len(array), nulls=int(tally[0]),
                       branch_tally=tuple(int(c) for c in tally))
    parts: dict[str, Any] = {"count": len(array), "nulls": array.null_count}
    if base.moments is not None:
        summary = summarise_numbers(array, hash_into)
        parts.update(non_finite=summary.non_finite, histogram=summary.histogram,
                     moments=Moments(summary.count, summary.mean, summary.m2, summary.minimum,
                                     summary.maximum))
    if base.categories is not None:
        parts["categories"] = counts_of(array, base.categories.cap)
    return replace(base, **parts)


def merge_profiles(a: ColumnProfile, b: ColumnProfile) -> ColumnProfile:
    return replace(
        a, count=a.count + b.count, nulls=a.nulls + b.nulls,
        moments=(merge_moments(a.moments, b.moments)
                 if a.moments is not None and b.moments is not None else None),
        non_finite=a.non_finite + b.non_finite,
        histogram=(merge_histograms(a.histogram, b.histogram)
                   if a.histogram is not None and b.histogram is not None else None),
        categories=(merge_counts(a.categories, b.categories)
                    if a.categories is not None and b.categories is not None else None),
        branch_tally=tuple(x + y for x, y in zip(a.branch_tally, b.branch_tally, strict=False)))


def is_close_profile(a: ColumnProfile, b: ColumnProfile, rel: float = 1e-9) -> bool:
    """Equal counts, histograms and categories; moments equal up to rounding of merge order."""
    if a.moments is None or b.moments is None:
        return a == b
    same_rest = replace(a, moments=None) == replace(b, moments=None)
    ma, mb = a.moments, b.moments
    return (same_rest and ma.count == mb.count and ma.minimum == mb.minimum
            and ma.maximum == mb.maximum and math.isclose(ma.mean, mb.mean, rel_tol=rel,
                                                          abs_tol=1e-12)
            and math.isclose(ma.m2, mb.m2, rel_tol=rel, abs_tol=1e-9))
