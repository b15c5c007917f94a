"""Column profiles: moments against numpy, mergeability, quantiles, categories and counts."""

from __future__ import annotations

import numpy as np
import pyarrow as pa
import pytest
from dataset_files import MATERIALS, SEGMENT_SCHEMA, write_avro, write_parquet
from hypothesis import given, settings
from hypothesis import strategies as st

from registry.datasets import fingerprint_file
from registry.datasets.categories import counts_of, merge_counts
from registry.datasets.histogram import MANTISSA_BITS, histogram_of, merge_histograms, quantiles
from registry.datasets.profile import is_close_profile, merge_profiles, profile_of
from registry.datasets.types import ValueType

DOUBLE = ValueType("double")


def test_moments_match_numpy():
    values = np.random.default_rng(3).gamma(2.0, 30.0, 50_000)
    moments = profile_of(pa.array(values), DOUBLE).moments
    # reference: numpy mean, var (ddof=0), min, max
    assert moments.mean == pytest.approx(np.mean(values), rel=1e-12)
    assert moments.variance == pytest.approx(np.var(values), rel=1e-10)
    assert (moments.minimum, moments.maximum) == (values.min(), values.max())


@settings(max_examples=30, deadline=None)
@given(st.lists(st.floats(-1e6, 1e6), min_size=2, max_size=200), st.integers(1, 199))
def test_merged_moments_equal_moments_of_the_whole(values, cut):
    cut = min(cut, len(values) - 1)
    whole = profile_of(pa.array(values), DOUBLE)
    merged = merge_profiles(profile_of(pa.array(values[:cut]), DOUBLE),
                            profile_of(pa.array(values[cut:]), DOUBLE))
    assert merged.moments.mean == pytest.approx(np.mean(values), rel=1e-9, abs=1e-6)
    assert merged.moments.variance == pytest.approx(np.var(values), rel=1e-8, abs=1e-4)
    assert merged.histogram == whole.histogram
    assert is_close_profile(merged, whole, rel=1e-8)


def test_quantiles_are_within_the_relative_width_of_a_bucket():
    values = np.random.default_rng(4).lognormal(3.0, 1.0, 100_000)
    histogram = histogram_of(values)
    levels = np.array([0.01, 0.25, 0.5, 0.75, 0.99])
    estimated = quantiles(histogram, levels, values.min(), values.max())
    exact = np.quantile(values, levels, method="lower")
    assert np.all(np.abs(estimated - exact) / exact <= 2.0**-MANTISSA_BITS)


def test_histogram_keeps_its_size_bounded_by_dropping_mantissa_bits():
    values = np.random.default_rng(5).standard_cauchy(200_000) * 1e3
    merged = histogram_of(values[:100_000])
    merged = merge_histograms(merged, histogram_of(values[100_000:]))
    assert len(merged.indices) <= 2048
    assert merged.total == len(values)


def test_category_counts_are_exact_up_to_the_cap():
    values = pa.array(["PVC"] * 5 + ["HDPE"] * 3 + [None])
    counts = counts_of(values)
    assert counts.as_dict() == {"PVC": 5, "HDPE": 3}
    assert counts.is_exact and counts.error_bound == 0


def test_heavy_hitters_beyond_the_cap_keep_the_frequent_values_within_the_bound():
    rng = np.random.default_rng(6)
    common = ["NORTHGATE"] * 3000 + ["RIVERSIDE"] * 2000
    rare = [f"rare-{i}" for i in rng.integers(0, 5000, 5000)]
    values = common + rare
    rng.shuffle(values)
    counts = counts_of(pa.array(values[:5000]), cap=16)
    counts = merge_counts(counts, counts_of(pa.array(values[5000:]), cap=16))
    found = counts.as_dict()
    assert not counts.is_exact
    # Misra-Gries (Agarwal et al. 2012): true - bound <= kept <= true, bound <= N / (cap + 1)
    assert counts.error_bound <= len(values) / 17
    for value, truth in (("NORTHGATE", 3000), ("RIVERSIDE", 2000)):
        assert truth - counts.error_bound <= found[value] <= truth


def test_profile_counts_enum_symbols_union_branches_and_nulls(tmp_path, records):
    found = fingerprint_file(str(write_avro(tmp_path / "s.avro", records)),
                             schema_json=SEGMENT_SCHEMA)
    material = found.profile["pipe_material"].to_dict()
    assert set(material["symbols"]) == set(MATERIALS)
    assert material["symbols"]["ASBESTOS_CEMENT"] == 0
    assert sum(material["symbols"].values()) == len(records)
    repairs = found.profile["repairs_5y"].to_dict()
    nulls = sum(r["repairs_5y"] is None for r in records)
    assert repairs["branches"] == {"null": nulls, "int": len(records) - nulls}
    assert repairs["nulls"] == nulls


def test_profiles_from_avro_and_parquet_agree(tmp_path, records):
    avro = fingerprint_file(str(write_avro(tmp_path / "s.avro", records)),
                            schema_json=SEGMENT_SCHEMA)
    parquet = fingerprint_file(str(write_parquet(tmp_path / "s.parquet", records[::-1])),
                               schema_json=SEGMENT_SCHEMA)
    for name in avro.profile:
        assert is_close_profile(avro.profile[name], parquet.profile[name])


def test_non_finite_values_are_counted_apart_from_the_moments():
    profile = profile_of(pa.array([1.0, float("nan"), float("inf"), 3.0]), DOUBLE)
    assert profile.non_finite == 2
    assert profile.moments.mean == 2.0
