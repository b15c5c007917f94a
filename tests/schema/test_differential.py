"""Differential tests against fastavro (the test oracle of DESIGN.md).

Random schemas and mutated copies: whenever `resolve` says compatible, fastavro reads every
generated writer datum with the reader schema; whenever it says incompatible, the witness datum
built from each problem's writer path fails to read in fastavro. Canonical forms and
fingerprints equal fastavro's on every generated schema.
"""

from __future__ import annotations

import io
import warnings

import fastavro
import pytest
from hypothesis import HealthCheck, event, given, settings
from hypothesis import strategies as st

from registry.schema import canonical_form, diff, fingerprint, parse, resolve, to_json
from registry.schema.errors import SchemaError

from .generators import (
    MUTATIONS,
    Naming,
    datum_for,
    record_json,
    schema_pairs,
    witness_datum,
)

# Where fastavro departs from the specification we follow the specification (see
# docs/schema-compatibility.md): rules whose problems fastavro does not detect when reading.
FASTAVRO_DEPARTURES = {
    # fastavro converts decimals with the writer's precision and scale and never compares them
    # with the reader's; Avro specification, Logical Types: decimals match only when equal.
    "decimal-mismatch",
}

SETTINGS = settings(max_examples=20, deadline=None, derandomize=True,
                    suppress_health_check=[HealthCheck.too_slow, HealthCheck.filter_too_much])


def _parse_both(reader_json, writer_json):
    try:
        reader, writer = parse(reader_json), parse(writer_json)
    except SchemaError:
        return None
    return reader, writer


def _round_trip(writer_parsed, reader_parsed, datum):
    buffer = io.BytesIO()
    fastavro.schemaless_writer(buffer, writer_parsed, datum)
    buffer.seek(0)
    return fastavro.schemaless_reader(buffer, writer_parsed, reader_parsed)


@pytest.mark.parametrize("first_mutation", MUTATIONS)
@SETTINGS
@given(data=st.data())
def test_verdict_agrees_with_fastavro_reading_real_data(first_mutation, data):
    reader_json, writer_json, mutations = data.draw(schema_pairs(first_mutation))
    parsed = _parse_both(reader_json, writer_json)
    if parsed is None:
        event("a mutation made an invalid schema")
        return  # a mutation made an invalid schema (a default no longer fitting, say)
    reader, writer = parsed
    for schema_json, schema in ((reader_json, reader), (writer_json, writer)):
        # fastavro.schema.to_parsing_canonical_form (the oracle), on every generated schema
        assert canonical_form(schema) == fastavro.schema.to_parsing_canonical_form(schema_json)
    fast_writer = fastavro.parse_schema(to_json(writer))
    fast_reader = fastavro.parse_schema(to_json(reader))
    resolution = resolve(reader, writer)
    event("compatible" if resolution.compatible else "incompatible")
    for mutation in mutations:
        event(f"mutation {mutation}")
    for problem in resolution.problems:
        event(f"problem {problem.rule}")
    if resolution.compatible:
        for _ in range(3):
            datum = data.draw(datum_for(writer))
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                _round_trip(fast_writer, fast_reader, datum)  # must not raise
        return
    for problem in resolution.problems:
        if problem.rule in FASTAVRO_DEPARTURES:
            continue
        datum = witness_datum(writer, problem.writer_path, problem.witness)
        with pytest.raises(Exception):
            _round_trip(fast_writer, fast_reader, datum)


@settings(max_examples=100, deadline=None, derandomize=True)
@given(schema_json=st.builds(Naming).flatmap(lambda naming: record_json(naming, depth=2)))
def test_canonical_form_and_fingerprints_equal_fastavro(schema_json):
    try:
        schema = parse(schema_json)
    except SchemaError:
        return
    form = canonical_form(schema)
    # fastavro.schema.to_parsing_canonical_form and fastavro.schema.fingerprint (the oracle)
    assert form == fastavro.schema.to_parsing_canonical_form(schema_json)
    result = fingerprint(schema)
    assert result.crc64_avro == fastavro.schema.fingerprint(form, "CRC-64-AVRO")
    assert result.sha256 == fastavro.schema.fingerprint(form, "SHA-256")
    assert canonical_form(parse(to_json(schema))) == form


@pytest.mark.parametrize("first_mutation", MUTATIONS)
@settings(max_examples=10, deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.filter_too_much])
@given(data=st.data())
def test_diff_classes_agree_with_resolution(first_mutation, data):
    old_json, new_json, _ = data.draw(schema_pairs(first_mutation))
    parsed = _parse_both(old_json, new_json)
    if parsed is None:
        return
    old, new = parsed
    changes = diff(old, new)
    assert changes.breaks_readers == (not resolve(new, old).compatible), changes
    assert changes.breaks_writers == (not resolve(old, new).compatible), changes
