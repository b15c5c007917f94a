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
    # Anchor at pmf(k) with lgamma, then walk down: pmf(i - 1) = pmf(i) i / (N - i + 1).
    # Summing log ratios away from k keeps the rounding small where the mass is.
    log_peak = (math.lgamma(discordant + 1) - math.lgamma(smaller + 1)
                - math.lgamma(discordant - smaller + 1) - discordant * math.log(2.0))
    below = np.arange(smaller, 0, -1, dtype=np.float64)
    log_ratios = np.log(below / (discordant - below + 1.0))
    relative = np.concatenate(([0.0], np.cumsum(log_ratios)))
    log_tail = log_peak + math.log(float(np.sum(np.exp(relative))))
    return min(1.0, 2.0 * math.exp(log_tail))
