"""Reading stored evaluation and gate JSON in every form the pages may meet."""

from __future__ import annotations

import pytest

from web.pages import _comparisons, _gate_results, _interval, _slices

ONE_REPORT = {"column": "district", "correction": "holm-bonferroni",
              "values": {"NORTHGATE": {"n": 80, "metrics": {"roc_auc": 0.7}}}}


@pytest.mark.parametrize("slices", [ONE_REPORT, [ONE_REPORT], {"district": ONE_REPORT},
                                    {"district": {"NORTHGATE": {"n": 80, "roc_auc": 0.7}}}])
def test_slices_read_from_each_stored_form(slices):
    assert _slices({"slices": slices}) == [("district", ["roc_auc"], [("NORTHGATE", 80, [0.7])])]


@pytest.mark.parametrize("slices", [None, 3, "x", [1], {"d": 3}, {"column": "d", "values": 3}])
def test_malformed_slices_are_skipped(slices):
    assert _slices({"slices": slices}) == []


def test_comparison_against_a_baseline_keeps_its_interval_and_method():
    document = {"comparison": {"roc_auc": {"difference": 0.02, "ci_low": 0.01, "ci_high": 0.03,
                                           "p_value": 0.01, "method": "delong"}, "x": 3}}
    assert _comparisons(document) == [("roc_auc", 0.02, 0.01, 0.03, 0.01, "delong")]
    assert _comparisons({"comparison": [1]}) == []


def test_intervals_may_be_pairs_or_mappings():
    assert _interval({"intervals": {"rmse": [1.0, 2.0]}}, "rmse") == (1.0, 2.0)
    assert _interval({"intervals": {"rmse": {"low": 1.0, "high": 2.0}}}, "rmse") == (1.0, 2.0)
    assert _interval({"intervals": {"rmse": "wide"}}, "rmse") == (None, None)


def test_gate_results_are_read_generically_and_waivers_shown_as_such():
    results, readable = _gate_results({"results": [
        {"gate": "schema-reads-feed", "passed": False, "waived": True, "summary": "s",
         "evidence": {"a": 1}}, "junk"]})
    assert readable and [(r.gate, r.status) for r in results] == [("schema-reads-feed", "waived")]
    assert _gate_results("not a report") == ([], False)
