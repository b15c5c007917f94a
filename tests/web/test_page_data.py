"""The page queries' readings of stored reports and evaluations, without a database."""

from __future__ import annotations

from registry.service.queries.reports import evidence_items, place_of, plain_number
from registry.service.queries.versions import _slices

STORED_SLICES = {"district": {"column": "district", "correction": "holm-bonferroni",
                              "values": {"NORTHGATE": {"n": 80, "metrics": {"roc_auc": 0.7}}}}}


def test_slices_are_read_as_the_evaluation_use_case_stores_them():
    [table] = _slices(STORED_SLICES)
    assert (table.column, table.metrics, table.rows) == ("district", ("roc_auc",),
                                                        (("NORTHGATE", 80, (0.7,)),))


def test_malformed_slices_are_skipped():
    for stored in ({"d": 3}, {"d": {"column": "d", "values": 3}}):
        assert _slices(stored) == ()


def test_a_failed_schema_gate_names_the_reader_path_at_fault():
    evidence = {"checks": [{"reader_version": 4, "writer_version": 2, "compatible": False,
                            "problems": [{"path": "/fields/diameter_mm/type",
                                          "rule": "type-mismatch", "message": "m"}]}]}
    assert place_of("anything", evidence) == "/fields/diameter_mm/type"
    assert place_of("diameter_mm: no unit any more", {}) == "diameter_mm"
    assert place_of("1 feature change since version 1, none breaking", {}) == ""


def test_evidence_reads_as_named_facts_without_raw_dumps():
    items = evidence_items({"compatible": True, "witness": None, "data_as_of": None,
                            "containment": 0.000123456, "rows": 12345, "nested": {"a_b": False},
                            "checks": [{"path": "/x", "ok": True}, {"path": "/y", "ok": False}]})
    by_label = {i.label: i for i in items}
    assert by_label["compatible"].text == "yes"
    assert "witness" not in by_label and "data as of" not in by_label
    assert by_label["containment"].text == "0.0001235" and by_label["rows"].text == "12,345"
    assert by_label["nested"].children[0].label == "a b"
    assert by_label["nested"].children[0].text == "no"
    assert by_label["checks"].table.columns == ("path", "ok")
    assert by_label["checks"].table.rows == (("/x", "yes"), ("/y", "no"))


def test_numbers_are_shown_at_a_sensible_precision():
    assert [plain_number(v) for v in (0.8160758706467661, 3, 0.0, 123456.7, 1e-7, True,
                                      None)] == ["0.8161", "3", "0", "123,457", "1.00e-07",
                                                 "yes", "—"]
