"""The schema gates alone on hand-made evidence: reads-live-feed, rollback-safe, output-readable
and the data-aware live-data-check."""

import dataclasses

import pytest

from gates_helpers import (ColumnCounts, judge, live_sample, passing_evidence, waive,
                           without_incumbent)
from registry.gates import SchemaCheck, SchemaProblem

DROPPED_SYMBOL = SchemaProblem(
    path="/fields/pipe_material/type/symbols",
    rule="enum-symbol-missing",
    message="writer symbol ASBESTOS_CEMENT is not among the reader's symbols and the reader "
            "enum has no default",
    witness={"enum_symbol": "ASBESTOS_CEMENT"})
NULL_BRANCH = SchemaProblem(
    path="/fields/min_air_temp_c_7d/type",
    rule="union-branch-unmatched",
    message="writer union branch null has no match in reader type double",
    witness={"union_branch": "null"})
TYPE_CHANGE = SchemaProblem(
    path="/fields/diameter_mm/type",
    rule="type-mismatch",
    message="reader type string cannot read writer type int")


def broken(reader: int, writer: int, *problems: SchemaProblem) -> SchemaCheck:
    return SchemaCheck(reader_version=reader, writer_version=writer, compatible=False,
                       problems=problems)


SCHEMA_GATES = {
    "reads-live-feed": "feed",
    "rollback-safe": "rollback",
    "output-readable": "output",
}


@pytest.mark.parametrize("gate", SCHEMA_GATES)
def test_schema_gate_passes_when_the_reader_resolves_the_writer(gate):
    result = judge(gate, passing_evidence())
    assert result.passed and not result.waived
    assert result.evidence


@pytest.mark.parametrize("gate,field", SCHEMA_GATES.items())
def test_schema_gate_fails_naming_the_reader_path_at_fault(gate, field):
    check = broken(2, 1, TYPE_CHANGE) if field == "feed" else broken(1, 2, TYPE_CHANGE)
    result = judge(gate, passing_evidence(**{field: check}))
    assert not result.passed
    assert result.summary.startswith("/fields/diameter_mm/type: ")
    problems = result.evidence["checks"][0]["problems"] if field == "feed" else \
        result.evidence["check"]["problems"]
    assert problems[0]["rule"] == "type-mismatch"


@pytest.mark.parametrize("gate", [*SCHEMA_GATES, "live-data-check"])
def test_schema_gate_passes_with_a_note_when_there_is_no_incumbent(gate):
    result = judge(gate, without_incumbent(passing_evidence()))
    assert result.passed
    assert any("nothing to compare against" in note for note in result.notes)


@pytest.mark.parametrize("gate,field", SCHEMA_GATES.items())
def test_schema_gate_fails_when_its_check_is_missing_though_a_version_is_live(gate, field):
    result = judge(gate, passing_evidence(**{field: None}))
    assert not result.passed
    assert "was supplied" in result.summary


@pytest.mark.parametrize("gate,field", SCHEMA_GATES.items())
def test_failed_schema_gate_waived_by_an_approver_counts_as_cleared(gate, field):
    check = broken(2, 1, TYPE_CHANGE) if field == "feed" else broken(1, 2, TYPE_CHANGE)
    result = judge(gate, passing_evidence(**{field: check}), waivers=waive(gate))
    assert not result.passed and result.waived and result.cleared
    assert result.waiver.approver == "tomas.lindqvist"


def test_reads_live_feed_ignores_past_feeds_unless_the_policy_asks():
    evidence = passing_evidence(
        version=5, incumbent_version=2, feed=SchemaCheck(5, 2, True),
        past_feeds=(SchemaCheck(5, 2, True), broken(5, 1, TYPE_CHANGE)))
    assert judge("reads-live-feed", evidence).passed
    result = judge("reads-live-feed", evidence, include_past_feeds=True)
    assert not result.passed
    assert "feed written by version 1" in result.summary
    assert len(result.evidence["checks"]) == 2


def test_reads_live_feed_with_past_feeds_passes_when_every_feed_is_readable():
    evidence = passing_evidence(version=5, incumbent_version=2, feed=SchemaCheck(5, 2, True),
                                past_feeds=(SchemaCheck(5, 1, True),))
    result = judge("reads-live-feed", evidence, include_past_feeds=True)
    assert result.passed
    assert "versions 2, 1" in result.summary


def test_schema_gate_counts_the_further_problems_in_its_summary():
    result = judge("reads-live-feed", passing_evidence(
        feed=broken(2, 1, TYPE_CHANGE, DROPPED_SYMBOL)))
    assert result.summary.startswith("/fields/diameter_mm/type: ")
    assert "(and 1 more problem)" in result.summary


# live-data-check: weigh each static break of the feed check against the live sample.

def test_break_the_live_sample_never_exercises_passes_with_the_counts():
    # SCENARIO.md: ASBESTOS_CEMENT never occurs in brackwater-live-sample.
    result = judge("live-data-check", passing_evidence(feed=broken(5, 2, DROPPED_SYMBOL)))
    assert result.passed
    assert "/fields/pipe_material/type/symbols" in result.summary
    assert "symbol ASBESTOS_CEMENT occurs 0 times in 5000 rows of brackwater-live-sample" \
        in result.summary
    (finding,) = result.evidence["findings"]
    assert finding["status"] == "unexercised"
    assert (finding["column"], finding["occurrences"], finding["rows"]) == \
        ("pipe_material", 0, 5000)


def test_unexercised_break_blocks_when_the_policy_says_so():
    result = judge("live-data-check", passing_evidence(feed=broken(5, 2, DROPPED_SYMBOL)),
                   unexercised_blocks=True)
    assert not result.passed
    assert result.summary.startswith("/fields/pipe_material/type/symbols: ")
    assert "occurs 0 times" in result.summary


def test_exercised_enum_break_fails_with_the_count():
    sample = live_sample(pipe_material=ColumnCounts(enum_symbols={"ASBESTOS_CEMENT": 37}))
    result = judge("live-data-check", passing_evidence(feed=broken(5, 2, DROPPED_SYMBOL),
                                                       live_sample=sample))
    assert not result.passed
    assert "symbol ASBESTOS_CEMENT occurs 37 times in 5000 rows" in result.summary


def test_null_union_branch_is_counted_from_the_null_count():
    quiet = judge("live-data-check", passing_evidence(feed=broken(5, 2, NULL_BRANCH)))
    assert quiet.passed
    sample = live_sample(min_air_temp_c_7d=ColumnCounts(nulls=12))
    loud = judge("live-data-check", passing_evidence(feed=broken(5, 2, NULL_BRANCH),
                                                     live_sample=sample))
    assert not loud.passed
    assert "union branch null occurs 12 times" in loud.summary


def test_union_branch_is_counted_from_the_branch_counts():
    problem = SchemaProblem("/fields/district/type", "union-branch-unmatched",
                            "writer union branch int has no match",
                            witness={"union_branch": "int", "column": "district"})
    sample = live_sample(district=ColumnCounts(union_branches={"string": 4990, "int": 10}))
    result = judge("live-data-check", passing_evidence(feed=broken(5, 2, problem),
                                                       live_sample=sample))
    assert not result.passed
    assert "union branch int occurs 10 times" in result.summary


def test_writer_null_witness_is_counted_from_the_null_count():
    problem = SchemaProblem("/fields/min_air_temp_c_7d/type", "null-unreadable",
                            "reader cannot take null", witness={"null": True})
    result = judge("live-data-check", passing_evidence(feed=broken(5, 2, problem)))
    assert result.passed
    assert result.evidence["findings"][0]["counted"] == "null"


def test_break_without_a_witness_is_exercised_by_every_record():
    result = judge("live-data-check", passing_evidence(feed=broken(4, 2, TYPE_CHANGE)))
    assert not result.passed
    assert result.summary.startswith("/fields/diameter_mm/type: ")
    assert "every record exercises it" in result.summary


def test_break_in_a_column_the_profile_lacks_cannot_be_shown_unexercised():
    sample = dataclasses.replace(live_sample(), columns={})
    result = judge("live-data-check", passing_evidence(feed=broken(5, 2, DROPPED_SYMBOL),
                                                       live_sample=sample))
    assert not result.passed
    assert "not in the live sample's profile" in result.summary


def test_too_small_a_sample_cannot_show_a_break_unexercised():
    result = judge("live-data-check", passing_evidence(feed=broken(5, 2, DROPPED_SYMBOL),
                                                       live_sample=live_sample(rows=40)))
    assert not result.passed
    assert "too few rows" in result.summary
    assert judge("live-data-check", passing_evidence(
        feed=broken(5, 2, DROPPED_SYMBOL), live_sample=live_sample(rows=40)),
        min_rows=20).passed


def test_break_without_a_registered_live_sample_fails():
    result = judge("live-data-check", passing_evidence(feed=broken(5, 2, DROPPED_SYMBOL),
                                                       live_sample=None))
    assert not result.passed
    assert "no live sample is registered" in result.summary


def test_live_data_check_passes_when_the_feed_is_readable():
    result = judge("live-data-check", passing_evidence())
    assert result.passed
    assert "no static break" in result.summary


def test_failed_live_data_check_can_be_waived():
    result = judge("live-data-check", passing_evidence(feed=broken(4, 2, TYPE_CHANGE)),
                   waivers=waive("live-data-check"))
    assert result.waived and result.cleared


def test_incompatible_feed_without_named_problems_fails_the_live_data_check():
    result = judge("live-data-check", passing_evidence(feed=broken(5, 2)))
    assert not result.passed
    assert "no problem named" in result.summary
