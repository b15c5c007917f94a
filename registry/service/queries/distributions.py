"""Distributions of a column shaped for a picture: even bins over the column's range (read from
the stored log-linear histogram) or named categories, alone or a reference and a current one
on the same bins, so they can be drawn over each other."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from registry.datasets.histogram import LogHistogram, bucket_bounds
from registry.datasets.profile import ColumnProfile

DISPLAY_BINS = 16
MAX_CATEGORIES = 12
INTEGER_TYPES = ("int", "long")


@dataclass(frozen=True)
class Distribution:
    """Shares (0..1) per bin or category; `current` is empty for a single distribution.

    numeric: `edges` has one more entry than the bins and `labels` is empty;
    categorical: `labels` names each category (the last may be "other") and `edges` is empty.
    """

    kind: str  # numeric | categories
    edges: tuple[float, ...]
    labels: tuple[str, ...]
    reference: tuple[float, ...]
    current: tuple[float, ...]
    integer: bool


def _edges(low: float, high: float, integer: bool) -> np.ndarray:
    if integer and high - low <= 2 * DISPLAY_BINS:
        return np.arange(np.floor(low) - 0.5, np.ceil(high) + 1.0, 1.0)  # one bin per value
    if high <= low:
        return np.array([low - 0.5, low + 0.5])
    return np.linspace(low, high, DISPLAY_BINS + 1)


def _rebinned(histogram: LogHistogram, edges: np.ndarray) -> np.ndarray:
    """Each stored bucket's count placed at its middle (a bucket is 2^-7 wide: inside a bin)."""
    if len(histogram.counts) == 0:
        return np.zeros(len(edges) - 1)
    lower, upper = bucket_bounds(histogram)
    middles = np.clip((lower + upper) / 2, edges[0], edges[-1])
    counts, _ = np.histogram(middles, bins=edges, weights=histogram.counts.astype(np.float64))
    return counts


def _shares(counts: np.ndarray) -> tuple[float, ...]:
    total = counts.sum()
    return tuple(float(c) for c in (counts / total if total else counts))


def _range(*profiles: ColumnProfile) -> tuple[float, float] | None:
    counted = [p.moments for p in profiles if p.moments and p.moments.count]
    lows = [m.minimum for m in counted if m.minimum is not None]
    highs = [m.maximum for m in counted if m.maximum is not None]
    if not lows or not highs:
        return None
    return float(min(lows)), float(max(highs))


def _category_counts(profile: ColumnProfile) -> dict[str, int]:
    if profile.symbols:
        return profile.symbol_counts() or {}
    return profile.categories.as_dict() if profile.categories is not None else {}


def distribution(reference: ColumnProfile, current: ColumnProfile | None = None
                 ) -> Distribution | None:
    """One column's distribution, or two on shared bins; None when nothing is stored to draw."""
    both = (reference,) if current is None else (reference, current)
    histograms = [p.histogram for p in both if p.histogram is not None]
    if len(histograms) == len(both):
        bounds = _range(*both)
        if bounds is None:
            return None
        integer = reference.avro_type in INTEGER_TYPES
        edges = _edges(*bounds, integer)
        shares = [_shares(_rebinned(histogram, edges)) for histogram in histograms]
        return Distribution("numeric", tuple(float(e) for e in edges), (), shares[0],
                            shares[1] if current is not None else (), integer)
    categories = [p.categories for p in both if p.categories is not None]
    if len(categories) == len(both):
        counts = [_category_counts(p) for p in both]
        totals: dict[str, int] = {}
        for found in counts:
            for name, count in found.items():
                totals[name] = totals.get(name, 0) + count
        if not totals:
            return None
        names = sorted(totals, key=lambda n: (-totals[n], n))
        shown, rest = names[:MAX_CATEGORIES], names[MAX_CATEGORIES:]
        shares = []
        for found, category_counts in zip(counts, categories, strict=True):
            row = [found.get(n, 0) for n in shown]
            if rest:
                row.append(sum(found.get(n, 0) for n in rest))
            total = max(category_counts.total, sum(row)) or 1
            shares.append(tuple(c / total for c in row))
        labels = tuple(shown) + (("other",) if rest else ())
        return Distribution("categories", (), labels, shares[0],
                            shares[1] if current is not None else (), False)
    return None
