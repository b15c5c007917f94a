"""PFA documents: top-level structure, declared types, cells and pools, canonical digest."""

import copy
import json
import random
import tracemalloc

import pytest

from registry.documents import InvalidPfaDocument, MalformedJson, read_pfa
from registry.documents.pfa import OPTIONAL_FIELDS, REQUIRED_FIELDS
from registry.schema import SchemaError, canonical_form
from .pfa_examples import LOGISTIC_REGRESSION, TREE_ENSEMBLE, USER_FUNCTIONS


def encode(document, **options):
    return json.dumps(document, **options).encode("utf-8")


def test_top_level_fields_are_those_of_the_pfa_specification():
    # PFA 0.8.1 specification, "Top-level fields" (the table of all allowed top-level fields).
    assert set(REQUIRED_FIELDS) == {"input", "output", "action"}
    assert set(OPTIONAL_FIELDS) == {"name", "method", "cells", "pools", "fcns", "begin", "end",
                                    "merge", "options", "metadata", "version", "doc",
                                    "randseed", "zero"}


def test_the_smallest_document_of_the_specification_reads():
    # PFA specification, "Top-level fields", Example 1.
    summary = read_pfa(b'{"input":"int","output":"int","action":"input"}')
    assert summary.method == "map"
    assert canonical_form(summary.input_schema) == '"int"'
    assert (summary.cells, summary.pools, summary.function_count) == ((), (), 0)


def test_a_document_with_every_kind_of_top_level_field_reads():
    # PFA specification, "Top-level fields", Example 2, with a fold engine's zero and merge.
    document = {
        "input": "string", "output": {"type": "array", "items": "string"},
        "cells": {"accumulate": {"type": {"type": "array", "items": "string"}, "init": []}},
        "pools": {"counters": {"type": "int", "shared": True}},
        "method": "fold", "zero": [], "merge": {"a.concat": ["tallyOne", "tallyTwo"]},
        "begin": {"log": {"rand.gaussian": [0.0, 1.0]}},
        "action": {"a.append": ["tally", "input"]},
        "end": {"log": {"cell": "accumulate"}},
        "fcns": {"addone": {"params": [{"old": {"type": "array", "items": "string"}},
                                       {"newitem": "string"}],
                            "ret": {"type": "array", "items": "string"},
                            "do": {"a.append": ["old", "newitem"]}}},
        "randseed": 12345, "name": "ExampleScoringEngine", "version": 1,
        "doc": "Doesn't do much.", "metadata": {"does": "notmuch"},
        "options": {"timeout": 1000}, "@": "line 1",
    }
    summary = read_pfa(encode(document))
    assert summary.method == "fold" and summary.name == "ExampleScoringEngine"
    assert summary.function_count == 1
    assert [cell.name for cell in summary.cells] == ["accumulate"]
    pool = summary.pools[0]
    assert (pool.name, pool.shared, pool.items) == ("counters", True, 0)


def test_a_logistic_regression_reports_its_coefficient_cell():
    summary = read_pfa(encode(LOGISTIC_REGRESSION))
    assert summary.name == "burst_logistic"
    (cell,) = summary.cells
    assert cell.name == "model" and cell.type.name == "Coefficients"
    assert cell.size == len(b'{"coeff":[0.0246,0.0038],"const":-5.07}')
    assert cell.items == 2
    assert summary.output_schema.name == "brackwater.scores.BurstRisk"


def test_a_tree_ensemble_shares_its_recursive_node_type_with_its_functions():
    summary = read_pfa(encode(TREE_ENSEMBLE))
    (forest,) = summary.cells
    assert forest.items == 3
    assert forest.type.items.name == "TreeNode"


def test_named_types_declared_in_input_and_output_are_visible_to_cells_pools_and_functions():
    summary = read_pfa(encode(USER_FUNCTIONS))
    assert summary.function_count == 2
    assert summary.pools[0].type.name == "brackwater.telemetry.PressureUnit"
    assert summary.output_schema.fields[1].type.name == "brackwater.telemetry.Band"


def test_a_type_referenced_before_it_is_declared_is_an_error_at_its_place():
    document = copy.deepcopy(USER_FUNCTIONS)
    document["cells"]["limits"]["type"] = "brackwater.telemetry.Later"
    document["fcns"]["band_of"]["ret"] = {"type": "enum", "name": "Later",
                                          "namespace": "brackwater.telemetry",
                                          "symbols": ["A"]}
    with pytest.raises(SchemaError) as caught:
        read_pfa(encode(document))
    assert caught.value.place == "/cells/limits/type"


def test_a_schema_error_names_its_path_in_the_document():
    document = copy.deepcopy(LOGISTIC_REGRESSION)
    document["input"]["fields"][2]["type"] = "decimal_number"
    with pytest.raises(SchemaError) as caught:
        read_pfa(encode(document), source="v1.pfa")
    assert (caught.value.source, caught.value.place) == ("v1.pfa", "/input/fields/2/type")
    assert caught.value.one_line().startswith("v1.pfa /input/fields/2/type: ")


def test_a_type_error_inside_an_expression_names_its_path():
    document = copy.deepcopy(LOGISTIC_REGRESSION)
    document["action"][0]["let"]["x"]["type"] = {"type": "array"}
    with pytest.raises(SchemaError) as caught:
        read_pfa(encode(document))
    assert caught.value.place.startswith("/action/0/let/x/type")


@pytest.mark.parametrize(("change", "place", "message"), [
    (lambda d: d.pop("input"), "/input", "input schema"),
    (lambda d: d.pop("output"), "/output", "output schema"),
    (lambda d: d.pop("action"), "/action", "action"),
    (lambda d: d.update(models=1, extra=2), "/models", "'models', 'extra'"),
    (lambda d: d.update(method="reduce"), "/method", "map, emit, fold"),
    (lambda d: d.update(method="fold"), "/zero", "fold"),
    (lambda d: d.update(name="burst-risk"), "/name", "name"),
    (lambda d: d.update(version="1"), "/version", "integer"),
    (lambda d: d.update(randseed=True), "/randseed", "integer"),
    (lambda d: d.update(metadata={"a": 1}), "/metadata/a", "strings"),
    (lambda d: d["cells"]["model"].pop("init"), "/cells/model/init", "initial value"),
    (lambda d: d["cells"]["model"].pop("type"), "/cells/model/type", "type"),
    (lambda d: d["cells"]["model"].update(size=3), "/cells/model/size", "'size'"),
    (lambda d: d["cells"]["model"].update(shared=True, rollback=True),
     "/cells/model/rollback", "incompatible"),
    (lambda d: d["cells"]["model"].update(source="json"), "/cells/model/init", "URL"),
    (lambda d: d.update(pools={"p": {"type": "int", "init": [1]}}), "/pools/p/init",
     "object"),
    (lambda d: d.update(fcns={"u.f": {"params": [], "ret": "int", "do": 1}}), "/fcns/u.f",
     "no dots"),
    (lambda d: d.update(fcns={"f": {"params": [], "do": 1}}), "/fcns/f/ret", "ret"),
])
def test_a_structure_error_names_its_place(change, place, message):
    document = copy.deepcopy(LOGISTIC_REGRESSION)
    change(document)
    with pytest.raises(InvalidPfaDocument, match=message) as caught:
        read_pfa(encode(document))
    assert caught.value.place == place


def test_a_document_that_is_not_an_object_or_not_json_is_refused():
    with pytest.raises(InvalidPfaDocument):
        read_pfa(b"[1, 2]")
    with pytest.raises(MalformedJson) as caught:
        read_pfa(b'{"input": "int",\n "output": }', source="v1.pfa")
    assert caught.value.place == "v1.pfa line 2, column 12"


def test_reformatting_a_document_keeps_its_digest():
    plain = read_pfa(encode(LOGISTIC_REGRESSION)).digest
    pretty = read_pfa(encode(LOGISTIC_REGRESSION, indent=4, sort_keys=True)).digest
    ascii_escaped = read_pfa(encode(USER_FUNCTIONS, ensure_ascii=True)).digest
    assert plain == pretty
    assert ascii_escaped == read_pfa(encode(USER_FUNCTIONS, indent="\t")).digest
    respelled = encode(LOGISTIC_REGRESSION).replace(b"-5.07", b"-507e-2")
    assert read_pfa(respelled).digest == plain


@pytest.mark.parametrize("change", [
    lambda d: d["cells"]["model"]["init"]["coeff"].__setitem__(0, 0.0247),
    lambda d: d["cells"]["model"]["init"]["coeff"].reverse(),
    lambda d: d.update(doc="retrained"),
    lambda d: d["input"]["fields"][1].update(name="age"),
])
def test_any_real_change_makes_a_new_digest(change):
    document = copy.deepcopy(LOGISTIC_REGRESSION)
    change(document)
    assert read_pfa(encode(document)).digest != read_pfa(encode(LOGISTIC_REGRESSION)).digest


def _cells_document(target_bytes: int) -> bytes:
    generator = random.Random(11)
    count = target_bytes // 20  # a random double and its comma take about 20 bytes
    weights = ",".join(repr(generator.random()) for _ in range(count))
    head = ('{"input": {"type": "array", "items": "double"}, "output": "double", '
            '"cells": {"weights": {"type": {"type": "array", "items": "double"}, "init": [')
    tail = ']}}, "action": {"a.sum": "input"}}'
    return (head + weights + tail).encode("ascii")


@pytest.mark.slow  # about 20 s: tracemalloc slows each of the 2.5 million numbers
def test_a_50_mb_cells_document_is_read_holding_at_most_two_copies():
    data = _cells_document(50_000_000)
    assert len(data) > 47_000_000
    tracemalloc.start()
    try:
        tracemalloc.reset_peak()
        baseline, _ = tracemalloc.get_traced_memory()
        summary = read_pfa(data)
        _, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    (cell,) = summary.cells
    assert cell.items == 50_000_000 // 20
    # The input is one copy (held by the caller); reading may add at most one more.
    assert peak - baseline <= 1.1 * len(data), f"peak {peak - baseline} for {len(data)} bytes"


# --- cell and pool inits: the declared type in Avro's JSON encoding ------------------------


def _document_with_init(cell_type, init, section="cells"):
    return json.dumps({"input": "double", "output": "double", "action": ["input"],
                       section: {"c": {"type": cell_type, "init": init}}}).encode()


def _fastavro_reads(cell_type, init) -> bool:
    """The oracle: fastavro's JSON decoder (Avro specification, JSON Encoding) turns `init`
    into a datum that fastavro's validator accepts for the type."""
    import io

    import fastavro
    from fastavro.validation import validate

    try:
        datum = next(fastavro.json_reader(io.StringIO(json.dumps(init)), cell_type))
        return validate(datum, fastavro.parse_schema(cell_type), raise_errors=False)
    except Exception:
        return False


INIT_CASES = [
    ("int", 3, None),
    ("int", "x", "/cells/c/init"),
    ("int", 2**31, "/cells/c/init"),
    (["null", "double"], {"double": 1.5}, None),
    (["null", "double"], None, None),
    (["null", "double"], 1.5, "/cells/c/init"),
    ({"type": "array", "items": "int"}, [1, 2, "three"], "/cells/c/init/2"),
    ({"type": "map", "values": "double"}, {"a": 1.0, "b": True}, "/cells/c/init/b"),
    ({"type": "record", "name": "Limits", "fields": [{"name": "low", "type": "double"}]},
     {"low": "cold"}, "/cells/c/init/low"),
    ({"type": "enum", "name": "Level", "symbols": ["LOW", "HIGH"]}, "MODERATE", "/cells/c/init"),
]


@pytest.mark.parametrize("cell_type, init, place", INIT_CASES)
def test_a_cell_init_must_fit_its_declared_type(cell_type, init, place):
    assert _fastavro_reads(cell_type, init) is (place is None)
    if place is None:
        assert read_pfa(_document_with_init(cell_type, init)).cells[0].name == "c"
        return
    with pytest.raises(InvalidPfaDocument) as refused:
        read_pfa(_document_with_init(cell_type, init))
    assert refused.value.place == place
    assert "does not fit the declared type" in refused.value.message


def test_each_item_of_a_pool_init_must_fit_the_pool_type():
    with pytest.raises(InvalidPfaDocument) as refused:
        read_pfa(_document_with_init("int", {"a": 1, "b": "two"}, section="pools"))
    assert refused.value.place == "/pools/c/init/b"
