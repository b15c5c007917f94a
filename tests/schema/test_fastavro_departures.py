"""The named cases where fastavro departs from the Avro specification, and what we do instead.

Each case asserts fastavro's behaviour (so the list stays true as fastavro changes) next to
ours; docs/schema-compatibility.md gives the reasons.
"""

from __future__ import annotations

import decimal
import io
import warnings

import fastavro
import pytest

from registry.schema import SchemaError, parse, resolve
from .test_parse import BAD_SCHEMAS


def round_trip(writer_json, reader_json, datum):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        writer = fastavro.parse_schema(writer_json)
        buffer = io.BytesIO()
        fastavro.schemaless_writer(buffer, writer, datum)
        buffer.seek(0)
        return fastavro.schemaless_reader(buffer, writer, fastavro.parse_schema(reader_json))


def test_decimal_precision_and_scale_are_not_compared_by_fastavro():
    # Avro specification, Logical Types: decimals match only if scale and precision match.
    writer = {"type": "bytes", "logicalType": "decimal", "precision": 6, "scale": 2}
    reader = {"type": "bytes", "logicalType": "decimal", "precision": 6, "scale": 3}
    assert round_trip(writer, reader, decimal.Decimal("1.23")) == decimal.Decimal("1.23")
    assert [p.rule for p in resolve(parse(reader), parse(writer)).problems] == [
        "decimal-mismatch"]


def test_invalid_decimal_is_rejected_by_fastavro_but_ignored_by_the_specification():
    # Avro specification, Logical Types: an invalid logical type is ignored, not an error.
    for schema in ({"type": "bytes", "logicalType": "decimal", "precision": 2, "scale": 3},
                   {"type": "fixed", "name": "F", "size": 2, "logicalType": "decimal",
                    "precision": 5}):
        with pytest.raises(Exception):
            fastavro.parse_schema(schema)
        assert parse(schema).ignored_logical is not None


def test_reader_alias_for_a_writer_field_read_by_name_crashes_fastavro():
    # Avro specification, Schema Resolution and Aliases: writer field a is read by reader field
    # a (same name); writer field b is then not read and is ignored.
    writer = {"type": "record", "name": "R", "fields": [{"name": "a", "type": "int"},
                                                        {"name": "b", "type": "int"}]}
    reader = {"type": "record", "name": "R", "fields": [{"name": "a", "type": "int",
                                                         "aliases": ["b"]}]}
    with pytest.raises(KeyError):
        round_trip(writer, reader, {"a": 1, "b": 2})
    assert resolve(parse(reader), parse(writer)).compatible


def test_named_types_of_different_kinds_match_by_name_in_fastavro():
    # Avro specification, Schema Resolution: an enum matches only an enum (and by name); fastavro
    # matches any two named types by name and then fails with a KeyError, not a resolution error.
    writer = {"type": "enum", "name": "x.Grade", "symbols": ["LOW"]}
    reader = {"type": "record", "name": "x.Grade", "fields": []}
    with pytest.raises(KeyError):
        round_trip(writer, reader, "LOW")
    assert [p.rule for p in resolve(parse(reader), parse(writer)).problems] == ["type-mismatch"]


# Invalid schemas of the specification's Schema Declaration that fastavro's parse_schema accepts.
ACCEPTED_BY_FASTAVRO = {
    "record without fields", "invalid record name", "invalid namespace", "duplicate field",
    "invalid field name", "bad field order", "negative fixed size", "fractional fixed size",
    "union with duplicate unnamed type", "union with two arrays", "union with two logical ints",
    "nested union", "primitive name redefined", "int default out of range",
    "record default missing field", "fixed default of wrong length",
    "enum default of field not a symbol", "array default item of wrong type",
    "aliases not a list",
}


@pytest.mark.parametrize("case, schema, place",
                         [c for c in BAD_SCHEMAS if c[0] in ACCEPTED_BY_FASTAVRO],
                         ids=sorted(ACCEPTED_BY_FASTAVRO, key=[c[0] for c in BAD_SCHEMAS].index))
def test_invalid_schema_fastavro_accepts_is_rejected_here(case, schema, place):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        fastavro.parse_schema(schema)  # accepted
    with pytest.raises(SchemaError):
        parse(schema)


def test_bytes_promoted_to_string_must_be_utf8():
    # Avro specification, Schema Resolution: bytes is promotable to string. Bytes that are not
    # UTF-8 cannot be strings, in fastavro or anywhere; we keep the verdict and warn.
    with pytest.raises(UnicodeDecodeError):
        round_trip("bytes", "string", b"\xff")
    result = resolve(parse("string"), parse("bytes"))
    assert result.compatible and result.notes[0].severity == "warning"
