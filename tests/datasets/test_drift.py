"""Drift: KS against scipy, PSI worked by hand, Jensen-Shannon and L-infinity for categories."""

from __future__ import annotations

import math

import numpy as np
import pyarrow as pa
import pytest
from scipy import stats
from scipy.spatial import distance

from registry.datasets import jensen_shannon, ks_two_sample, l_infinity, psi, psi_level
from registry.datasets.drift import column_drift
from registry.datasets.profile import profile_of
from registry.datasets.types import ValueType


@pytest.mark.parametrize("n, m, shift", [(20, 30, 0.0), (60, 45, 0.5), (300, 200, 0.2),
                                         (1000, 1000, 0.1), (2000, 1500, 0.15)])
def test_ks_matches_scipy_exact(n, m, shift):
    rng = np.random.default_rng(n + m)
    a, b = rng.normal(size=n), rng.normal(shift, size=m)
    statistic, p_value = ks_two_sample(a, b)
    reference = stats.ks_2samp(a, b, method="exact")  # scipy.stats.ks_2samp, exact mode
    assert statistic == pytest.approx(reference.statistic, abs=1e-12)
    assert p_value == pytest.approx(reference.pvalue, rel=1e-6, abs=1e-12)


def test_ks_matches_scipy_asymptotic_for_large_samples():
    rng = np.random.default_rng(11)
    a, b = rng.normal(size=30_000), rng.normal(0.02, size=20_000)
    statistic, p_value = ks_two_sample(a, b)
    reference = stats.ks_2samp(a, b, method="asymp")  # scipy.stats.ks_2samp, asymptotic mode
    assert statistic == pytest.approx(reference.statistic, abs=1e-12)
    assert p_value == pytest.approx(reference.pvalue, rel=0.05)


def test_psi_worked_by_hand():
    expected = [40, 30, 20, 10]  # shares 0.4, 0.3, 0.2, 0.1
    actual = [30, 30, 20, 20]  # shares 0.3, 0.3, 0.2, 0.2
    # (0.3 - 0.4) ln(0.3 / 0.4) = -0.1 * -0.287682 = 0.0287682
    # (0.3 - 0.3) ln(1)          = 0
    # (0.2 - 0.2) ln(1)          = 0
    # (0.2 - 0.1) ln(0.2 / 0.1) =  0.1 *  0.693147 = 0.0693147
    # total                                        = 0.0980829
    assert psi(expected, actual) == pytest.approx(0.0980829, abs=1e-7)
    assert psi_level(0.0980829) == "ok"
    assert psi_level(0.1) == "warn" and psi_level(0.25) == "alarm"


def test_psi_gives_an_empty_bin_a_floor_share():
    # shares (0.5, 0.5) against (1.0, 0.0 -> floor 1e-4):
    # (1.0 - 0.5) ln(1.0 / 0.5)    =  0.5    *  0.693147 = 0.346574
    # (1e-4 - 0.5) ln(1e-4 / 0.5)  = -0.4999 * -8.517193 = 4.257744
    # total                                              = 4.604318
    assert psi([50, 50], [100, 0]) == pytest.approx(4.604318, abs=1e-6)


def test_jensen_shannon_and_l_infinity_by_hand_and_against_scipy():
    p, q = np.array([0.5, 0.5, 0.0]), np.array([0.25, 0.25, 0.5])
    # scipy.spatial.distance.jensenshannon returns the square root of the divergence
    assert jensen_shannon(p, q) == pytest.approx(distance.jensenshannon(p, q, base=2) ** 2)
    assert l_infinity(p, q) == 0.5  # |0 - 0.5| on the third category
    assert jensen_shannon(p, p) == 0.0


def test_drift_of_profiles_flags_a_shifted_column_and_a_lost_category():
    rng = np.random.default_rng(12)
    reference = profile_of(pa.array(rng.normal(420, 35, 20_000)), ValueType("double"))
    shifted = profile_of(pa.array(rng.normal(470, 35, 20_000)), ValueType("double"))
    same = profile_of(pa.array(rng.normal(420, 35, 20_000)), ValueType("double"))
    moved = column_drift(reference, shifted)
    assert moved.level == "alarm" and moved.ks_p_value < 1e-6
    assert moved.ks_statistic == pytest.approx(
        stats.ks_2samp(rng.normal(420, 35, 20_000), rng.normal(470, 35, 20_000)).statistic,
        abs=0.03)
    assert column_drift(reference, same).level == "ok"
    symbols = ("CAST_IRON", "PVC", "ASBESTOS_CEMENT")
    enum = ValueType("enum", symbols=symbols)
    before = profile_of(pa.array(["CAST_IRON"] * 50 + ["PVC"] * 40 + ["ASBESTOS_CEMENT"] * 10),
                        enum)
    after = profile_of(pa.array(["CAST_IRON"] * 55 + ["PVC"] * 45), enum)
    drift = column_drift(before, after)
    assert drift.missing_categories == ("ASBESTOS_CEMENT",)
    assert drift.l_infinity == pytest.approx(0.1)
    assert math.isfinite(drift.psi)
