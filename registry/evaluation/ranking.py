"""Midranks (tied values share the mean of their ranks): exact ties for the AUC and DeLong."""

from __future__ import annotations

import numpy as np


def midranks_of_sorted(sorted_values: np.ndarray) -> np.ndarray:
    """1-based midranks of values already in ascending order."""
    count = sorted_values.shape[0]
    if count == 0:
        return np.empty(0, dtype=np.float64)
    starts = np.flatnonzero(np.concatenate(([True], sorted_values[1:] != sorted_values[:-1])))
    ends = np.append(starts[1:], count)
    # Ranks start+1 .. end share their mean.
    return np.repeat((starts + ends + 1) / 2.0, ends - starts)


def midranks(values: np.ndarray) -> np.ndarray:
    """1-based midranks of values in their own order."""
    order = np.argsort(values)
    ranks = np.empty(values.shape[0], dtype=np.float64)
    ranks[order] = midranks_of_sorted(values[order])
    return ranks
