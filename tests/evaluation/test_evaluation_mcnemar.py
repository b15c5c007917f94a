"""McNemar's exact test against scipy.stats.binomtest (two-sided, p = 1/2) on discordant pairs."""

from __future__ import annotations

import pytest
from scipy.stats import binomtest

from registry.evaluation import mcnemar_exact_p_value


@pytest.mark.parametrize("candidate_only, baseline_only", [
    (0, 0), (0, 1), (1, 0), (3, 3), (5, 9), (9, 5), (0, 25), (40, 61), (300, 260),
    (1_000, 1_100), (12_000, 12_400), (5, 500), (250_000, 251_500),
])
def test_mcnemar_exact_p_value_matches_scipy_binomtest(candidate_only, baseline_only):
    discordant = candidate_only + baseline_only
    expected = 1.0 if discordant == 0 else binomtest(
        candidate_only, discordant, 0.5, alternative="two-sided").pvalue
    assert mcnemar_exact_p_value(candidate_only, baseline_only) == pytest.approx(
        expected, rel=1e-8, abs=1e-300)
