"""How far a current dataset has moved from a reference one, column by column.

PSI on the reference's bins, with 0.1 and 0.25 as the warn and alarm levels (common practice, no
single source); the two-sample Kolmogorov-Smirnov statistic and p-value; Jensen-Shannon divergence
and L-infinity distance for categories (Breck et al., Data Validation for Machine Learning,
MLSys 2019).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from registry.datasets.histogram import aligned_masses
from registry.datasets.profile import ColumnProfile

PSI_WARN = 0.1
PSI_ALARM = 0.25
PSI_FLOOR = 1e-4  # share given to an empty bin so the logarithm stays finite
PSI_BINS = 10
# Lattice cells up to which the exact KS p-value is computed; scipy's "auto" goes further (up
# to 10,000 values a side), but past this the limit law agrees to about 1% and costs nothing.
EXACT_KS_CELLS = 10**7


def psi(expected: np.ndarray, actual: np.ndarray) -> float:
    """Population Stability Index: sum over bins of (a - e) * ln(a / e), on shares of each."""
    e = np.asarray(expected, dtype=np.float64)
    a = np.asarray(actual, dtype=np.float64)
    e = np.maximum(e / e.sum(), PSI_FLOOR)
    a = np.maximum(a / a.sum(), PSI_FLOOR)
    return float(np.sum((a - e) * np.log(a / e)))


def psi_level(value: float) -> str:
    if value >= PSI_ALARM:
        return "alarm"
    if value >= PSI_WARN:
        return "warn"
    return "ok"


def jensen_shannon(p: np.ndarray, q: np.ndarray) -> float:
    """Jensen-Shannon divergence in bits (0 for equal distributions, at most 1)."""
    p = np.asarray(p, dtype=np.float64) / np.sum(p)
    q = np.asarray(q, dtype=np.float64) / np.sum(q)
    m = (p + q) / 2

    def kl(x: np.ndarray) -> float:
        present = x > 0
        return float(np.sum(x[present] * np.log2(x[present] / m[present])))

    return max(0.0, (kl(p) + kl(q)) / 2)


def l_infinity(p: np.ndarray, q: np.ndarray) -> float:
    p = np.asarray(p, dtype=np.float64) / np.sum(p)
    q = np.asarray(q, dtype=np.float64) / np.sum(q)
    return float(np.max(np.abs(p - q))) if len(p) else 0.0


# --- Kolmogorov-Smirnov ----------------------------------------------------------------------

def ks_statistic(a: np.ndarray, b: np.ndarray) -> float:
    """sup |F_a - F_b| over the pooled sample."""
    a, b = np.sort(a), np.sort(b)
    pooled = np.concatenate([a, b])
    fa = np.searchsorted(a, pooled, side="right") / len(a)
    fb = np.searchsorted(b, pooled, side="right") / len(b)
    return float(np.max(np.abs(fa - fb)))


def ks_two_sample(a: np.ndarray, b: np.ndarray) -> tuple[float, float]:
    """Statistic and two-sided p-value of the two-sample Kolmogorov-Smirnov test."""
    statistic = ks_statistic(np.asarray(a, float), np.asarray(b, float))
    return statistic, ks_p_value(statistic, len(a), len(b))


def ks_p_value(statistic: float, n: int, m: int, exact_cells: int = EXACT_KS_CELLS) -> float:
    """Exact by lattice-path counting when n*m is at most exact_cells, Kolmogorov's limit
    otherwise."""
    if n == 0 or m == 0:
        return 1.0
    if n * m <= exact_cells:
        return _ks_exact_p(statistic, n, m)
    return _ks_asymptotic_p(statistic, n, m)


def _ks_exact_p(statistic: float, n: int, m: int) -> float:
    """P(D >= d) under the null: the share of monotone lattice paths from (0,0) to (n,m) that
    reach |i/n - j/m| >= d (Hodges, The significance probability of the Smirnov two-sample
    test, 1958). Rows are rescaled as they go, so the counts never overflow."""
    # D is a multiple of 1/(n*m); count in the integers |i*m - j*n| to avoid rounding.
    reach = round(statistic * n * m)
    if reach <= 0:
        return 1.0
    j = np.arange(m + 1)
    row = np.cumprod(np.abs(j * n) < reach).astype(np.float64)  # row 0: steps along j only
    log_scale = 0.0
    for i in range(1, n + 1):
        # The cells of a row inside the band form one run, so a running sum over the run of
        # the row below counts the paths reaching each cell.
        inside = np.abs(i * m - j * n) < reach
        row = np.where(inside, np.cumsum(np.where(inside, row, 0.0)), 0.0)
        peak = row.max()
        if peak <= 0:
            return 1.0
        row /= peak
        log_scale += math.log(peak)
    inside_paths = math.log(row[m]) + log_scale if row[m] > 0 else -math.inf
    total = math.lgamma(n + m + 1) - math.lgamma(n + 1) - math.lgamma(m + 1)
    return float(min(1.0, max(0.0, -math.expm1(inside_paths - total))))


def _ks_asymptotic_p(statistic: float, n: int, m: int) -> float:
    """Kolmogorov's limiting distribution with Stephens' small-sample correction
    (Stephens 1970; Press et al., Numerical Recipes, 3rd ed., section 14.3.3)."""
    en = math.sqrt(n * m / (n + m))
    lam = (en + 0.12 + 0.11 / en) * statistic
    if lam < 1e-3:
        return 1.0
    k = np.arange(1, 101)
    total = 2 * np.sum((-1.0) ** (k - 1) * np.exp(-2 * (k * lam) ** 2))
    return float(min(1.0, max(0.0, total)))


# --- drift of profiles -----------------------------------------------------------------------

@dataclass(frozen=True)
class ColumnDrift:
    psi: float
    level: str
    ks_statistic: float | None = None
    ks_p_value: float | None = None
    jensen_shannon: float | None = None
    l_infinity: float | None = None
    missing_categories: tuple[str, ...] = ()  # seen in the reference, absent now
    new_categories: tuple[str, ...] = ()

    def to_dict(self) -> dict[str, Any]:
        document: dict[str, Any] = {"psi": self.psi, "level": self.level}
        if self.ks_statistic is not None:
            document.update({"ks_statistic": self.ks_statistic, "ks_p_value": self.ks_p_value})
        if self.jensen_shannon is not None:
            document.update({"jensen_shannon": self.jensen_shannon,
                             "l_infinity": self.l_infinity,
                             "missing_categories": list(self.missing_categories),
                             "new_categories": list(self.new_categories)})
        return document


def column_drift(reference: ColumnProfile, current: ColumnProfile, *,
                 exact_ks_cells: int = EXACT_KS_CELLS) -> ColumnDrift | None:
    """Drift of one column; `exact_ks_cells=0` takes the KS p-value from the limit law alone,
    for reports that judge many windows at once."""
    if reference.histogram is not None and current.histogram is not None:
        return _numeric_drift(reference, current, exact_ks_cells)
    if reference.categories is not None and current.categories is not None:
        return _categorical_drift(reference, current)
    if reference.branch_names and current.branch_names:
        ref_counts, cur_counts = reference.branch_counts(), current.branch_counts()
        if ref_counts is not None and cur_counts is not None:
            return _shares_drift(ref_counts, cur_counts)
    return None


def _numeric_drift(reference: ColumnProfile, current: ColumnProfile,
                   exact_ks_cells: int = EXACT_KS_CELLS) -> ColumnDrift:
    """PSI on deciles of the reference and KS, both read from the shared histogram edges, which
    puts KS within one bucket (2^-m relative width) of its value on the raw records."""
    assert reference.histogram is not None and current.histogram is not None  # see column_drift
    _, ref_counts, cur_counts = aligned_masses(reference.histogram, current.histogram)
    if ref_counts.sum() == 0 or cur_counts.sum() == 0:
        return ColumnDrift(psi=0.0, level="ok")
    ref_cdf = np.cumsum(ref_counts) / ref_counts.sum()
    cur_cdf = np.cumsum(cur_counts) / cur_counts.sum()
    # reference bins: cut after the bucket where the reference's cumulative share passes k/10
    levels = np.arange(1, PSI_BINS) / PSI_BINS
    boundaries = np.unique(np.searchsorted(ref_cdf, levels, side="left") + 1)
    starts = np.concatenate([[0], boundaries[boundaries < len(ref_counts)]]).astype(np.int64)
    ref_bins = np.add.reduceat(ref_counts, starts)
    cur_bins = np.add.reduceat(cur_counts, starts)
    if reference.nulls or current.nulls:
        ref_bins = np.append(ref_bins, reference.nulls)
        cur_bins = np.append(cur_bins, current.nulls)
    value = psi(ref_bins, cur_bins)
    statistic = float(np.max(np.abs(ref_cdf - cur_cdf)))
    p_value = ks_p_value(statistic, int(ref_counts.sum()), int(cur_counts.sum()), exact_ks_cells)
    return ColumnDrift(psi=value, level=psi_level(value), ks_statistic=statistic,
                       ks_p_value=p_value)


def _categorical_drift(reference: ColumnProfile, current: ColumnProfile) -> ColumnDrift:
    assert reference.categories is not None and current.categories is not None  # see column_drift
    ref, cur = reference.categories.as_dict(), current.categories.as_dict()
    # what a heavy-hitters summary no longer lists, and nulls, count as bins of their own
    rest = {"ref": reference.categories.total - sum(ref.values()),
            "cur": current.categories.total - sum(cur.values())}
    return _shares_drift(ref, cur, [rest["ref"], reference.nulls], [rest["cur"], current.nulls])


def _shares_drift(ref: dict[str, int], cur: dict[str, int], ref_extra: Sequence[int] = (),
                  cur_extra: Sequence[int] = ()) -> ColumnDrift:
    """Drift between two distributions over named categories (or union branches)."""
    names = sorted(set(ref) | set(cur))
    p = np.array([ref.get(n, 0) for n in names] + list(ref_extra), dtype=np.float64)
    q = np.array([cur.get(n, 0) for n in names] + list(cur_extra), dtype=np.float64)
    if p.sum() == 0 or q.sum() == 0:
        return ColumnDrift(psi=0.0, level="ok")
    value = psi(p, q)
    return ColumnDrift(
        psi=value, level=psi_level(value), jensen_shannon=jensen_shannon(p, q),
        l_infinity=l_infinity(p, q),
        missing_categories=tuple(n for n in names if ref.get(n, 0) and not cur.get(n, 0)),
        new_categories=tuple(n for n in names if cur.get(n, 0) and not ref.get(n, 0)))
