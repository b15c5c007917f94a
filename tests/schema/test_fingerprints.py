"""Parsing Canonical Form and fingerprints against the Avro project's test vectors and fastavro."""

from __future__ import annotations

import fastavro
import pytest

from registry.schema import canonical_form, crc64_avro, fingerprint, load, parse

# Apache Avro, share/test/data/schema-tests.txt: input, canonical form, CRC-64-AVRO as the signed
# 64-bit integer Java prints (None where the file gives no fingerprint).
AVRO_VECTORS = [
    ('"null"', '"null"', 7195948357588979594),
    ('{"type":"null"}', '"null"', None),
    ('"boolean"', '"boolean"', -6970731678124411036),
    ('{"type":"boolean"}', '"boolean"', None),
    ('"int"', '"int"', 8247732601305521295),
    ('{"type":"int"}', '"int"', None),
    ('"long"', '"long"', -3434872931120570953),
    ('{"type":"long"}', '"long"', None),
    ('"float"', '"float"', 5583340709985441680),
    ('{"type":"float"}', '"float"', None),
    ('"double"', '"double"', -8181574048448539266),
    ('{"type":"double"}', '"double"', None),
    ('"bytes"', '"bytes"', 5746618253357095269),
    ('{"type":"bytes"}', '"bytes"', None),
    ('"string"', '"string"', -8142146995180207161),
    ('{"type":"string"}', '"string"', None),
    ("[  ]", "[]", -1241056759729112623),
    ('[ "int"  ]', '["int"]', -5232228896498058493),
    ('[ "int" , {"type":"boolean"} ]', '["int","boolean"]', 5392556393470105090),
    ('{"fields":[], "type":"record", "name":"foo"}',
     '{"name":"foo","type":"record","fields":[]}', -4824392279771201922),
    ('{"fields":[], "type":"record", "name":"foo", "namespace":"x.y"}',
     '{"name":"x.y.foo","type":"record","fields":[]}', 5916914534497305771),
    ('{"fields":[], "type":"record", "name":"a.b.foo", "namespace":"x.y"}',
     '{"name":"a.b.foo","type":"record","fields":[]}', -4616218487480524110),
    ('{"fields":[], "type":"record", "name":"foo", "doc":"Useful info"}',
     '{"name":"foo","type":"record","fields":[]}', -4824392279771201922),
    ('{"fields":[], "type":"record", "name":"foo", "aliases":["foo","bar"]}',
     '{"name":"foo","type":"record","fields":[]}', -4824392279771201922),
    ('{"fields":[], "type":"record", "name":"foo", "doc":"foo", "aliases":["foo","bar"]}',
     '{"name":"foo","type":"record","fields":[]}', -4824392279771201922),
    ('{"fields":[{"type":{"type":"boolean"}, "name":"f1"}], "type":"record", "name":"foo"}',
     '{"name":"foo","type":"record","fields":[{"name":"f1","type":"boolean"}]}',
     7843277075252814651),
    # Vector 026 declares "default":"true" (a string) for a boolean, which Schema Declaration
    # forbids and we reject; with the boolean default true the canonical form is the same.
    ('{ "fields":[{"type":"boolean", "aliases":[], "name":"f1", "default":true},\n'
     ' {"order":"descending","name":"f2","doc":"Hello","type":"int"}],\n'
     ' "type":"record", "name":"foo"\n}',
     '{"name":"foo","type":"record","fields":[{"name":"f1","type":"boolean"},'
     '{"name":"f2","type":"int"}]}', -4860222112080293046),
    ('{"type":"enum", "name":"foo", "symbols":["A1"]}',
     '{"name":"foo","type":"enum","symbols":["A1"]}', -6342190197741309591),
    ('{"namespace":"x.y.z", "type":"enum", "name":"foo", "doc":"foo bar", "symbols":["A1", "A2"]}',
     '{"name":"x.y.z.foo","type":"enum","symbols":["A1","A2"]}', -4448647247586288245),
    ('{"name":"foo","type":"fixed","size":15}', '{"name":"foo","type":"fixed","size":15}',
     1756455273707447556),
    ('{"namespace":"x.y.z", "type":"fixed", "name":"foo", "doc":"foo bar", "size":32}',
     '{"name":"x.y.z.foo","type":"fixed","size":32}', -3064184465700546786),
    ('{ "items":{"type":"null"}, "type":"array"}', '{"type":"array","items":"null"}',
     -589620603366471059),
    ('{ "values":"string", "type":"map"}', '{"type":"map","values":"string"}',
     -8732877298790414990),
    ('{"name":"PigValue","type":"record",\n'
     ' "fields":[{"name":"value", "type":["null", "int", "long", "PigValue"]}]}',
     '{"name":"PigValue","type":"record","fields":[{"name":"value","type":'
     '["null","int","long","PigValue"]}]}', -1759257747318642341),
]


@pytest.mark.parametrize("text, canonical, java_fingerprint", AVRO_VECTORS,
                         ids=[f"vector-{i:03d}" for i in range(len(AVRO_VECTORS))])
def test_canonical_form_and_crc64_match_the_avro_test_vectors(text, canonical, java_fingerprint):
    result = fingerprint(load(text))
    assert result.canonical_form == canonical  # Avro schema-tests.txt, <<canonical
    if java_fingerprint is not None:  # Avro schema-tests.txt, <<fingerprint (signed, LE bytes)
        expected = (java_fingerprint & (2 ** 64 - 1)).to_bytes(8, "little").hex()
        assert result.crc64_avro == expected


def test_crc64_of_nothing_is_the_empty_constant():
    # Avro specification, Schema Fingerprints: fingerprint64 starts from EMPTY.
    assert crc64_avro(b"") == 0xC15D213AA4D7A795


def test_fingerprint_shapes_and_fastavro_agreement():
    schema_json = {"type": "record", "name": "Segment", "namespace": "brackwater", "fields": [
        {"name": "segment_id", "type": "string", "doc": "asset id"},
        {"name": "pipe_material", "type": {"type": "enum", "name": "PipeMaterial",
                                           "symbols": ["CAST_IRON", "PVC"], "default": "PVC"}},
        {"name": "tag", "type": {"type": "fixed", "name": "Tag", "size": 2}},
        {"name": "again", "type": "Tag"},
        {"name": "installed", "type": {"type": "int", "logicalType": "date"}},
        {"name": "cost", "type": {"type": "bytes", "logicalType": "decimal", "precision": 9,
                                  "scale": 2}},
        {"name": "readings", "type": {"type": "map", "values": {"type": "array",
                                                                "items": "double"}}},
    ]}
    result = fingerprint(parse(schema_json))
    # fastavro.schema.to_parsing_canonical_form / fastavro.schema.fingerprint (the oracle)
    assert result.canonical_form == fastavro.schema.to_parsing_canonical_form(schema_json)
    assert result.crc64_avro == fastavro.schema.fingerprint(result.canonical_form, "CRC-64-AVRO")
    assert result.sha256 == fastavro.schema.fingerprint(result.canonical_form, "SHA-256")
    assert len(result.crc64_avro) == 16 and len(result.sha256) == 64


def test_canonical_form_keeps_non_ascii_unescaped():
    # Avro specification, Parsing Canonical Form, [STRINGS]: no escapes for printable characters.
    schema = parse({"type": "record", "name": "R", "fields": [], "doc": "é"})
    assert canonical_form(schema) == '{"name":"R","type":"record","fields":[]}'


def test_deep_schema_has_a_canonical_form():
    depth = 1000
    text = '{"type":"array","items":' * depth + '"int"' + "}" * depth
    form = canonical_form(load(text))
    assert form == '{"type":"array","items":' * depth + '"int"' + "}" * depth


# Example schemas printed in the Avro specification (Complex Types, Names, Logical Types), with
# their canonical forms by the transformations of Parsing Canonical Form for Schemas.
SPECIFICATION_EXAMPLES = [
    ({"type": "record", "name": "LongList", "aliases": ["LinkedLongs"], "fields": [
        {"name": "value", "type": "long"}, {"name": "next", "type": ["null", "LongList"]}]},
     '{"name":"LongList","type":"record","fields":[{"name":"value","type":"long"},'
     '{"name":"next","type":["null","LongList"]}]}'),
    ({"type": "enum", "name": "Suit", "symbols": ["SPADES", "HEARTS", "DIAMONDS", "CLUBS"]},
     '{"name":"Suit","type":"enum","symbols":["SPADES","HEARTS","DIAMONDS","CLUBS"]}'),
    ({"type": "array", "items": "string", "default": []}, '{"type":"array","items":"string"}'),
    ({"type": "map", "values": "long", "default": {}}, '{"type":"map","values":"long"}'),
    ({"type": "fixed", "size": 16, "name": "md5"}, '{"name":"md5","type":"fixed","size":16}'),
    ({"type": "bytes", "logicalType": "decimal", "precision": 4, "scale": 2}, '"bytes"'),
    ({"type": "record", "name": "Example", "namespace": "org.foo", "fields": [
        {"name": "inner", "type": {"type": "record", "name": "Inner", "fields": [
            {"name": "n", "type": "int"}]}},
        {"name": "again", "type": "Inner"},
        {"name": "other", "type": {"type": "fixed", "name": "org.bar.Tag", "size": 1}},
        {"name": "plain", "type": {"type": "enum", "name": "Plain", "namespace": "",
                                   "symbols": ["A"]}}]},
     '{"name":"org.foo.Example","type":"record","fields":[{"name":"inner","type":'
     '{"name":"org.foo.Inner","type":"record","fields":[{"name":"n","type":"int"}]}},'
     '{"name":"again","type":"org.foo.Inner"},{"name":"other","type":'
     '{"name":"org.bar.Tag","type":"fixed","size":1}},{"name":"plain","type":'
     '{"name":"Plain","type":"enum","symbols":["A"]}}]}'),
]


@pytest.mark.parametrize("schema_json, canonical", SPECIFICATION_EXAMPLES,
                         ids=[f"example-{i}" for i in range(len(SPECIFICATION_EXAMPLES))])
def test_canonical_form_of_the_specifications_examples(schema_json, canonical):
    # Avro specification, Parsing Canonical Form for Schemas; fastavro agrees (the oracle).
    assert canonical_form(parse(schema_json)) == canonical
    assert fastavro.schema.to_parsing_canonical_form(schema_json) == canonical
