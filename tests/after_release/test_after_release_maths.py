"""The maths after release, checked against outside references named beside each check:
scipy's `spearmanr`, `ks_2samp` and `jensenshannon`, scikit-learn's metrics, PSI worked by hand."""

from __future__ import annotations

from datetime import UTC, datetime

import numpy as np
import pyarrow as pa
import pytest
from scipy.spatial.distance import jensenshannon
from scipy.stats import ks_2samp, spearmanr
from sklearn.metrics import accuracy_score, brier_score_loss, log_loss, roc_auc_score

from registry.after_release.agreement import agreement, spearman
from registry.after_release.quality import live_quality, wilson
from registry.after_release.report import merge_windows
from registry.after_release.states import ReportSettings, is_below, judge
from registry.after_release.row_ids import (
    HashIndex,
    first_repeat,
    hash_row_ids,
    hash_row_ids_reference,
)
from registry.after_release.summaries import WindowSummary, merge_summaries
from registry.after_release.timeline import serving_spells
from registry.after_release.windows import window_seconds, window_starts
from registry.datasets.drift import column_drift, psi
from registry.datasets.profile import is_close_profile, profile_of
from registry.datasets.types import ValueType

DOUBLE = ValueType("double")


def test_spearman_matches_scipy_with_ties():
    rng = np.random.default_rng(7)
    a = np.round(rng.random(500), 2)  # rounding makes ties
    b = np.round(a + rng.normal(0, 0.2, 500), 1)
    # scipy.stats.spearmanr: Pearson correlation of midranks
    assert spearman(a, b) == pytest.approx(spearmanr(a, b).statistic, abs=1e-12)


def test_binary_agreement_is_the_share_on_the_same_side_of_the_threshold():
    a = np.array([0.1, 0.6, 0.5, 0.49, 0.9])
    b = np.array([0.2, 0.4, 0.51, 0.5, 0.95])
    found = agreement(1, "binary", a, b, threshold=0.5)
    # by hand: same side at 0.5 for rows 1, 3 and 5 (0.5 counts as positive): 3 of 5
    assert found.share_agreeing == pytest.approx(3 / 5)
    assert found.mean_absolute_difference == pytest.approx(np.mean(np.abs(a - b)))


def test_multiclass_agreement_compares_top_classes():
    a = np.array([[0.7, 0.2, 0.1], [0.1, 0.3, 0.6], [0.4, 0.5, 0.1]])
    b = np.array([[0.5, 0.4, 0.1], [0.5, 0.3, 0.2], [0.2, 0.7, 0.1]])
    assert agreement(1, "multiclass", a, b).share_agreeing == pytest.approx(2 / 3)


def test_psi_worked_by_hand():
    # PSI = sum (a - e) ln(a / e) on shares. Expected 40/40/20, actual 20/40/40:
    # (0.2-0.4) ln(0.2/0.4) + 0 + (0.4-0.2) ln(0.4/0.2) = 2 * 0.2 * ln 2 = 0.277259
    assert psi(np.array([40, 40, 20]), np.array([20, 40, 40])) == pytest.approx(
        0.4 * np.log(2), abs=1e-12)


def test_window_drift_ks_and_jensen_shannon_against_scipy():
    rng = np.random.default_rng(11)
    training, live = rng.normal(450, 55, 4000), rng.normal(480, 60, 900)
    found = column_drift(profile_of(pa.array(training), DOUBLE), profile_of(pa.array(live), DOUBLE))
    # scipy.stats.ks_2samp on the raw values; ours reads the shared histogram edges, which puts
    # it within one bucket's share of the raw statistic
    assert found.ks_statistic == pytest.approx(ks_2samp(training, live).statistic, abs=0.01)
    assert found.level == "warn" or found.level == "alarm"
    districts = ValueType("string")
    ref = profile_of(pa.array(["A"] * 50 + ["B"] * 30 + ["C"] * 20), districts)
    cur = profile_of(pa.array(["A"] * 20 + ["B"] * 30 + ["C"] * 50), districts)
    categorical = column_drift(ref, cur)
    # scipy's jensenshannon is the distance (square root of the divergence), base 2 for bits
    p, q = np.array([50, 30, 20, 0, 0]), np.array([20, 30, 50, 0, 0])
    assert categorical.jensen_shannon == pytest.approx(jensenshannon(p, q, base=2) ** 2)


def test_live_quality_metrics_match_scikit_learn_and_the_auc_has_its_delong_interval():
    rng = np.random.default_rng(5)
    scores = rng.random(800)
    labels = (rng.random(800) < scores).astype(np.int64)
    quality = live_quality("binary", labels, scores, (), "roc_auc")
    # scikit-learn's metrics are the reference for every figure
    assert quality.value == pytest.approx(roc_auc_score(labels, scores))
    assert quality.metrics["accuracy"] == pytest.approx(accuracy_score(labels, scores >= 0.5))
    assert quality.metrics["brier"] == pytest.approx(brier_score_loss(labels, scores))
    assert quality.metrics["log_loss"] == pytest.approx(log_loss(labels, scores))
    from registry.evaluation import auc_standard_error  # checked against published DeLong

    half = 1.959963984540054 * auc_standard_error(labels, scores)
    assert (quality.ci_low, quality.ci_high) == pytest.approx((quality.value - half,
                                                               quality.value + half))


def test_wilson_interval_worked_by_hand():
    # Wilson (1927): 81 of 263 at z = 1.96 gives 0.2553 to 0.3662 (Newcombe 1998, Table I, ex. 1)
    low, high = wilson(81 / 263, 263, 1.96)
    assert (round(low, 4), round(high, 4)) == (0.2553, 0.3662)


def test_degrading_needs_the_whole_interval_below_the_evaluation_by_more_than_the_margin():
    rng = np.random.default_rng(9)
    scores = rng.random(3000)
    labels = (rng.random(3000) < 0.5).astype(np.int64)  # scores carry no signal: AUC near 0.5
    quality = live_quality("binary", labels, scores, (), "roc_auc")
    assert is_below(quality, 0.78, 0.02) and not is_below(quality, 0.5, 0.02)
    settings = ReportSettings(86400, "roc_auc", 0.02)
    figures = {**quality.to_dict(), "evaluation_value": 0.78}
    state, reasons = judge({"mean_pressure_kpa": {"psi": 0.3, "level": "alarm"}}, figures,
                           settings)
    assert state == "degrading" and len(reasons) == 2
    assert judge({"x": {"psi": 0.12, "level": "warn"}}, None, settings) == ("steady", [])
    assert judge({}, {**figures, "evaluation_value": 0.5}, settings) == ("steady", [])


def test_a_week_is_the_merge_of_its_days():
    rng = np.random.default_rng(3)
    days = [rng.normal(450, 50, 300) for _ in range(7)]
    summaries = [(1, 86400 * (7 * 2857 + d), WindowSummary(  # a week aligned on the epoch
        task="binary", rows=300, inputs={"p": profile_of(pa.array(v), DOUBLE)},
        predictions={})) for d, v in enumerate(days)]
    weekly = merge_windows(summaries, 7 * 86400)
    whole = profile_of(pa.array(np.concatenate(days)), DOUBLE)
    ((_, week),) = weekly.items()
    assert week.rows == 2100
    assert is_close_profile(week.inputs["p"], whole)
    merged = merge_summaries(summaries[0][2], summaries[1][2])
    assert merged.rows == 600


def test_row_id_hashes_follow_their_definition_and_integers_hash_as_their_text():
    ids = ["seg-00001@2026-11-02", "", "Ünïcode", "x" * 300]
    assert np.array_equal(hash_row_ids(pa.array(ids)), hash_row_ids_reference(ids))
    assert np.array_equal(hash_row_ids(pa.array([42, 7])), hash_row_ids(pa.array(["42", "7"])))


@pytest.mark.parametrize("count", [1, 3, 4, 5, 1001])
def test_ids_hashed_four_at_a_time_hash_as_each_alone_whatever_their_lengths(count):
    rng = np.random.default_rng(count)
    ids = ["".join(chr(int(c)) for c in rng.integers(32, 0x500, int(rng.integers(0, 30))))
           for _ in range(count)]
    if count > 4:
        ids[4:8] = ["seg-0001", "seg-0002", "seg-0003", "seg-0004"]  # one length, side by side
    assert np.array_equal(hash_row_ids(pa.array(ids)), hash_row_ids_reference(ids))
    assert np.array_equal(hash_row_ids(pa.array(ids).slice(1)), hash_row_ids_reference(ids[1:]))


def _first_repeat_in_python(hashes: np.ndarray) -> int:
    seen: set[int] = set()
    for index, value in enumerate(hashes.tolist()):
        if value in seen:
            return index
        seen.add(value)
    return -1


@pytest.mark.parametrize("size, repeats", [
    (0, 0), (1, 0), (4096, 0), (4096, 2), (4097, 1), (300_000, 0), (300_000, 1),
    (300_000, 40),
])
def test_the_first_repeated_id_is_the_one_a_python_set_finds_first(size, repeats):
    """Large batches are first checked with a table per partition of the top bits, small ones
    and those with a repeat go through one table: each gives the earliest row whose id came
    before, as a plain walk with a set does."""
    rng = np.random.default_rng(size + repeats)
    hashes = rng.integers(0, 2**64, size, dtype=np.uint64, endpoint=False)
    if size:
        hashes[: size // 4] |= np.uint64(0xFFF0) << np.uint64(48)  # crowd the top partitions
    for _ in range(repeats):
        earlier, later = sorted(rng.choice(size, 2, replace=False).tolist())
        hashes[later] = hashes[earlier]
    assert first_repeat(hashes) == _first_repeat_in_python(hashes)


@pytest.mark.parametrize("keys, seen", [
    (20_000, 50_000), (0, 10), (10, 0), (3, 3),
])
def test_a_hash_index_finds_the_keys_numpys_isin_finds(keys, seen):
    rng = np.random.default_rng(keys + seen)
    key_hashes = rng.integers(0, 2**64, keys, dtype=np.uint64, endpoint=False)
    # half the keys among the hashes met, and keys sharing their low bits (one probe chain)
    others = rng.integers(0, 2**64, seen, dtype=np.uint64, endpoint=False)
    if keys and seen:
        others[: seen // 2] = rng.choice(key_hashes, seen // 2)
        key_hashes[: keys // 3] = (np.arange(keys // 3, dtype=np.uint64) << np.uint64(40)) | 7
        others[-1] = key_hashes[0]
    index = HashIndex(key_hashes)
    # the references: numpy's isin, and a Python dict from key to position
    assert np.array_equal(index.found_in(others), np.isin(key_hashes, others))
    where = {int(h): i for i, h in enumerate(key_hashes)}
    assert index.positions_of(others).tolist() == [where.get(int(h), -1) for h in others]


def test_windows_are_aligned_on_utc_days():
    assert window_seconds("1d") == 86400 and window_seconds("6h") == 21600
    moment = int(datetime(2026, 11, 2, 23, 59, tzinfo=UTC).timestamp() * 1e6)
    assert window_starts(np.array([moment]), 86400)[0] == int(
        datetime(2026, 11, 2, tzinfo=UTC).timestamp())


def test_spells_open_and_close_with_the_stage_events():
    t = [datetime(2026, 11, d, tzinfo=UTC) for d in range(1, 6)]
    events = [(1, "candidate", "entered", t[0]), (1, "shadow", "entered", t[1]),
              (1, "shadow", "moved-on", t[2]), (1, "live", "entered", t[2]),
              (1, "live", "rolled-back", t[3]), (2, "shadow", "entered", t[4])]
    spells = serving_spells(events, ("shadow", "canary", "live"))
    (first,) = spells[1]
    assert first.start == int(t[1].timestamp() * 1e6) and first.end == int(t[3].timestamp() * 1e6)
    assert spells[2][0].end is None


def test_the_policys_serving_table_is_checked_and_named_at_fault():
    from registry.gates import PolicyError, default_policy, load_policy

    policy = load_policy('[serving]\nwindow = "6h"\nretention_days = 30\n', source="test",
                         base=default_policy())
    assert policy.serving.window_seconds == 21600 and policy.serving.retention_days == 30
    assert default_policy().serving.quality_margin == 0.02
    for text, place in (('window = "5x"', "serving.window"),
                        ("retention_days = 0", "serving.retention_days"),
                        ("colour = 1", "serving.colour")):
        with pytest.raises(PolicyError) as refused:
            load_policy(f"[serving]\n{text}\n", source="test", base=default_policy())
        assert refused.value.place == place
