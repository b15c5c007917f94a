"""The canonical value encoding: the vectors of docs/canonical-values.md, checked two ways."""

from __future__ import annotations

import math
from pathlib import Path

import canonical_reference as reference
import numpy as np
import pyarrow as pa
import pytest
from dataset_files import SEGMENT_SCHEMA, segment_records
from hypothesis import given, settings
from hypothesis import strategies as st

from registry.datasets import hashing, key_set_digest
from registry.datasets.types import ValueType, record_type

DOCUMENT = Path(__file__).parents[2] / "docs" / "canonical-values.md"

READING = {"type": "record", "name": "Reading",
           "fields": [{"name": "diameter_mm", "type": "int"}]}
SEGMENT = {"type": "record", "name": "Segment", "namespace": "brackwater.assets", "fields": [
    {"name": "segment_id", "type": "string"}, {"name": "district", "type": "string"},
    {"name": "pipe_material", "type": {"type": "enum", "name": "PipeMaterial", "symbols": [
        "CAST_IRON", "DUCTILE_IRON", "PVC", "HDPE", "ASBESTOS_CEMENT"]}},
    {"name": "pipe_age_years", "type": "double"}, {"name": "diameter_mm", "type": "int"},
    {"name": "repairs_5y", "type": ["null", "int"]}]}
INSPECTION = {"type": "record", "name": "Inspection", "fields": [
    {"name": "notes", "type": {"type": "array", "items": "string"}},
    {"name": "readings", "type": {"type": "map", "values": "double"}},
    {"name": "site", "type": {"type": "record", "name": "Site", "fields": [
        {"name": "x", "type": "double"}, {"name": "ok", "type": "boolean"}]}},
    {"name": "raw", "type": "bytes"}]}

VECTORS = [  # (schema, records, record hashes, content digest), as in the document
    (READING, [{"diameter_mm": 150}, {"diameter_mm": 300}],
     ["8f118999cf0ec20a4d746f491075f5eb", "3a75d65cee9532ee511c4a3ed1834714"],
     "c9875ff6bda3f4f89e90b987e1f93cff"),
    (SEGMENT, [
        {"segment_id": "NG-0001", "district": "NORTHGATE", "pipe_material": "CAST_IRON",
         "pipe_age_years": 61.5, "diameter_mm": 150, "repairs_5y": None},
        {"segment_id": "RS-0002", "district": "RIVERSIDE", "pipe_material": "PVC",
         "pipe_age_years": 12.0, "diameter_mm": 200, "repairs_5y": 2}],
     ["8bdf215223aa1cd6e206c178d7db8b17", "33b42d050955fe5fd5d0e5fc85479753"],
     "bf934e572d001b36b7d7a7755d23226a"),
    (INSPECTION, [
        {"notes": ["leak", "joint"], "readings": {"kpa": 412.5, "flow": 3.25},
         "site": {"x": -0.0, "ok": True}, "raw": b"\x00\x01"},
        {"notes": [], "readings": {}, "site": {"x": math.nan, "ok": False}, "raw": b""}],
     ["03dd1edef9e61b19819362f5caacb3a7", "1375a6bc5c8636f60748fdb428659134"],
     "1752c59b566c520f88dc60a9f31244db"),
]


def batch_of(schema: dict, records: list[dict]) -> tuple[pa.RecordBatch, object]:
    record = record_type(schema)
    struct = pa.struct([(name, kind.arrow_type()) for name, kind in record.fields])
    return pa.RecordBatch.from_struct_array(pa.array(records, type=struct)), record


def vectorised_hashes(schema: dict, records: list[dict]) -> tuple[list[str], str]:
    batch, record = batch_of(schema, records)
    lane0, lane1 = hashing.record_lanes(batch, record)
    hashes = [f"{(int(high) << 64) | int(low):032x}" for low, high in zip(lane0, lane1)]
    return hashes, f"{hashing.digest_of_lanes(lane0, lane1):032x}"


def document_text() -> str:
    return DOCUMENT.read_text(encoding="utf-8")


@pytest.mark.parametrize("schema, records, hashes, digest", VECTORS)
def test_record_vectors_of_the_document_hold_for_the_numpy_code(schema, records, hashes, digest):
    assert vectorised_hashes(schema, records) == (hashes, digest)


@pytest.mark.parametrize("schema, records, hashes, digest", VECTORS)
def test_record_vectors_of_the_document_hold_for_the_plain_reference(schema, records, hashes,
                                                                     digest):
    assert [f"{reference.record_hash(schema, r):032x}" for r in records] == hashes
    assert reference.content_digest(schema, records) == digest


def test_every_vector_in_the_tests_is_written_in_the_document():
    text = document_text()
    for _, _, hashes, digest in VECTORS:
        for value in [*hashes, digest]:
            assert f"`{value}`" in text


def test_primitive_vectors_of_the_document():
    text = document_text()
    assert "`mix64(1)` | `5692161d100b05e5`" in text
    assert f"{reference.mix64(1):016x}" == "5692161d100b05e5"
    k0, k1 = hashing.field_key(hashing.INTEGER, "diameter_mm")
    assert (f"{int(k0):016x}", f"{int(k1):016x}") == ("78b7d73546d63365", "5759c4ef4451d5be")
    assert reference.key(2, "diameter_mm") == (int(k0), int(k1))
    w0, w1 = hashing.words(pa.array(["NORTHGATE"]), ValueType("string"))
    assert (f"{int(w0[0]):016x}", f"{int(w1[0]):016x}") == ("8c87c33fbd53d9c7", "047256af5ff713eb")
    assert reference.byte_words(4, b"NORTHGATE") == (int(w0[0]), int(w1[0]))
    bits = hashing.canonical_float_bits(np.array([-0.0, 0.0, math.nan, -math.nan, 1.5]))
    assert [f"{int(b):016x}" for b in bits] == [
        "0000000000000000", "0000000000000000", "7ff8000000000000", "7ff8000000000000",
        "3ff8000000000000"]


def test_key_digest_vectors_of_the_document():
    text = document_text()
    assert key_set_digest(["NG-0001", "RS-0002"]) == "88cbb5012fac5d818bb1cb3ce33818ec"
    assert key_set_digest(np.array([1, 2, 3])) == "db5a98d7a684f019f0cf76e84c34b9be"
    assert reference.key_digest("string", ["NG-0001", "RS-0002"]) == \
        "88cbb5012fac5d818bb1cb3ce33818ec"
    assert "`88cbb5012fac5d818bb1cb3ce33818ec`" in text
    assert "`db5a98d7a684f019f0cf76e84c34b9be`" in text


def test_document_names_every_kind():
    text = document_text()
    for kind in ("null", "boolean", "integer", "float", "string", "bytes", "record", "array",
                 "map"):
        assert f"| {kind} |" in text


texts = st.text(max_size=20)
numbers = st.floats(allow_nan=True, allow_infinity=True)
records_strategy = st.lists(st.fixed_dictionaries({
    "notes": st.lists(texts, max_size=4),
    "readings": st.dictionaries(texts, numbers, max_size=3),
    "site": st.fixed_dictionaries({"x": numbers, "ok": st.booleans()}),
    "raw": st.binary(max_size=20),
}), min_size=1, max_size=6)


@settings(max_examples=40, deadline=None)
@given(records_strategy)
def test_numpy_code_agrees_with_the_plain_reference_on_composite_records(records):
    hashes, digest = vectorised_hashes(INSPECTION, records)
    assert hashes == [f"{reference.record_hash(INSPECTION, r):032x}" for r in records]
    assert digest == reference.content_digest(INSPECTION, records)


def test_numpy_code_agrees_with_the_plain_reference_on_segments():
    records = segment_records(50)
    hashes, digest = vectorised_hashes(SEGMENT_SCHEMA, records)
    assert digest == reference.content_digest(SEGMENT_SCHEMA, records)


@pytest.mark.parametrize("schema, records, hashes, digest", VECTORS)
def test_fingerprinting_a_file_gives_the_documented_digest(tmp_path, schema, records, hashes,
                                                           digest):
    from dataset_files import write_avro

    from registry.datasets import fingerprint_file

    path = write_avro(tmp_path / "vectors.avro", records, schema=schema)
    assert fingerprint_file(str(path), schema_json=None).content_digest == digest
