"""McNemar's exact test for paired accuracies: only rows where exactly one model is right count.

McNemar (1947), Psychometrika 12:153-157; the exact form is a two-sided binomial test of the
discordant counts against p = 1/2, computed here in log space so it stays exact for large counts.
"""

from __future__ import annotations

import math

import numpy as np


def mcnemar_exact_p_value(candidate_only: int, baseline_only: int) -> float:
    """Two-sided p-value: 2 P(X <= min(b, c)) for X ~ Binomial(b + c, 1/2), at most 1."""
    discordant = candidate_only + baseline_only
    if discordant == 0:
        return 1.0
    smaller = min(candidate_only, baseline_only)
    # log pmf(i) = -N log 2 + sum_{j < i} log((N - j) / (j + 1))
    steps = np.arange(smaller, dtype=np.float64)
    log_pmf = np.concatenate(([0.0], np.cumsum(np.log((discordant - steps) / (steps + 1.0)))))
    log_pmf -= discordant * math.log(2.0)
    peak = float(log_pmf.max())
    log_tail = peak + math.log(float(np.sum(np.exp(log_pmf - peak))))
    return min(1.0, 2.0 * math.exp(log_tail))
