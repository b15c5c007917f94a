"""Hostile input at scale: random and adversarial schemas, PFA documents, policies and CSV files
end in a typed user error or a result, within a time limit, and without a memory blow-up."""

from __future__ import annotations

import json
import signal
import tempfile
import tracemalloc
from contextlib import contextmanager
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from registry import schema as avro
from registry.datasets import fingerprint_file
from registry.documents import read_document
from registry.errors import LockkeeperError
from registry.gates import load_policy

pytestmark = pytest.mark.reliability
CASES = settings(max_examples=200, deadline=None, database=None,
                 suppress_health_check=[HealthCheck.too_slow])
SECONDS_PER_CASE = 10
MEMORY_LIMIT = 512 * 1024 * 1024
DEPTH = 100_000
GIGABYTE = 1_000_000_000


class TookTooLong(Exception):
    pass


@contextmanager
def time_limit(seconds: float):
    def interrupt(signum, frame):
        raise TookTooLong(f"over {seconds} s")

    previous = signal.signal(signal.SIGALRM, interrupt)
    signal.setitimer(signal.ITIMER_REAL, seconds)
    try:
        yield
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, previous)


def survives(action, *, seconds: float = SECONDS_PER_CASE) -> None:
    """Run `action`: a result or a typed user error are both fine; anything else fails."""
    with time_limit(seconds):
        try:
            action()
        except LockkeeperError:
            pass


def peak_memory_of(action, *, seconds: float = 120) -> int:
    tracemalloc.start()
    try:
        survives(action, seconds=seconds)
        return tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()


json_values = st.recursive(
    st.none() | st.booleans() | st.integers() | st.floats(allow_nan=False) | st.text(max_size=8)
    | st.sampled_from(["int", "string", "record", "array", "map", "enum", "fixed", "null"]),
    lambda children: st.lists(children, max_size=4) | st.dictionaries(
        st.sampled_from(["type", "name", "fields", "items", "values", "symbols", "size",
                         "default", "aliases", "namespace", "logicalType", "precision",
                         "scale", "order", "doc"]) | st.text(max_size=5), children, max_size=5),
    max_leaves=30)


@CASES
@given(st.one_of(json_values.map(json.dumps), st.text(max_size=200)))
def test_the_schema_parser_ends_in_a_schema_or_a_typed_error(text):
    survives(lambda: avro.load(text, source="fuzz.avsc"))


pfa_documents = st.fixed_dictionaries(
    {"input": json_values, "output": json_values, "action": json_values},
    optional={"cells": st.dictionaries(st.text(max_size=4), st.fixed_dictionaries(
        {"type": json_values, "init": json_values}), max_size=3),
        "pools": json_values, "fcns": json_values, "method": json_values,
        "name": json_values})


@CASES
@given(st.one_of(pfa_documents.map(lambda d: json.dumps(d).encode()), st.binary(max_size=300)))
def test_the_pfa_reader_ends_in_a_summary_or_a_typed_error(data):
    survives(lambda: read_document(data, filename="fuzz.pfa.json"))


toml_lines = st.lists(st.one_of(
    st.sampled_from(["[stages.live]", "[stages.canary]", "[stages.live.gates]", "[gates]",
                     "[stages.shadow.gates]", "ladder = [\"candidate\", \"live\"]",
                     "exclusive = true", "skippable = true", "approved = true",
                     "no-regression = false", "[gates.no-regression]"]),
    st.builds(lambda k, v: f"{k} = {v}", st.sampled_from(
        ["ladder", "exclusive", "skippable", "approvers", "max_auc_drop", "alpha", "approved",
         "min_rows", "slice-guard", "enabled"]),
        st.sampled_from(["1", "-1", "0.5", "true", "\"x\"", "[]", "[1, \"a\"]", "{}", "nan",
                         "1e400", "\"\"", "[[[]]]"])),
    st.text(max_size=20)), max_size=12).map("\n".join)


@CASES
@given(toml_lines)
def test_the_policy_loader_ends_in_a_policy_or_a_typed_error(text):
    survives(lambda: load_policy(text, source="fuzz.toml"))


CSV_SCHEMA = {"type": "record", "name": "Row", "namespace": "fuzz", "fields": [
    {"name": "segment_id", "type": "string"}, {"name": "diameter_mm", "type": "int"},
    {"name": "pipe_age_years", "type": ["null", "double"]},
    {"name": "pipe_material", "type": {"type": "enum", "name": "PipeMaterial",
                                       "symbols": ["PVC", "HDPE"]}}]}
csv_cells = st.one_of(st.sampled_from(["", "PVC", "HDPE", "1", "-2147483649", "1e309", "nan",
                                       "\"", "\"\"", ",", "\n", "\r", "é", "\x00"]),
                      st.text(max_size=6))


@CASES
@given(st.lists(st.lists(csv_cells, min_size=0, max_size=5), max_size=6),
       st.booleans())
def test_the_csv_reader_ends_in_a_fingerprint_or_a_typed_error(rows, with_header):
    header = "segment_id,diameter_mm,pipe_age_years,pipe_material\n" if with_header else ""
    text = header + "".join(",".join(row) + "\n" for row in rows)
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "fuzz.csv"
        path.write_bytes(text.encode("utf-8", "surrogatepass"))
        survives(lambda: fingerprint_file(str(path), schema_json=CSV_SCHEMA, format="csv"))


# --- adversarial cases, each watched for memory -----------------------------------------------

def _varint(n: int) -> bytes:
    """Avro specification, Binary Encoding: zig-zag, then 7 bits a byte."""
    n = (n << 1) ^ (n >> 63)
    out = bytearray()
    while True:
        low, n = n & 0x7F, n >> 7
        if n:
            out.append(low | 0x80)
        else:
            out.append(low)
            return bytes(out)


def _avro_header_claiming(length: int) -> bytes:
    key = b"avro.schema"
    return b"Obj\x01" + _varint(1) + _varint(len(key)) + key + _varint(length) + b'"int"'


def _avro_block_claiming(length: int) -> bytes:
    import io

    import fastavro

    buffer = io.BytesIO()
    fastavro.writer(buffer, {"type": "record", "name": "R", "fields": [
        {"name": "a", "type": "int"}]}, [{"a": 1}])
    data = buffer.getvalue()
    sync = data[-16:]
    header = data[:data.index(sync) + 16]
    return header + _varint(1) + _varint(length) + b"\x02" + sync


HOSTILE = {
    "schema nested 100,000 deep": lambda tmp: avro.load(
        '{"type":"array","items":' * DEPTH + '"int"' + "}" * DEPTH),
    "union nested 100,000 deep": lambda tmp: avro.load("[" * DEPTH + '"int"' + "]" * DEPTH),
    "record nested 100,000 deep": lambda tmp: avro.load(
        '{"type":"record","name":"R","fields":[{"name":"f","type":' * DEPTH + '"int"'
        + "}]}" * DEPTH),
    "schema fixed of 1 GB": lambda tmp: avro.load(
        f'{{"type":"fixed","name":"F","size":{GIGABYTE}}}'),
    "PFA nested 100,000 deep": lambda tmp: read_document(
        ('{"input":"double","output":"double","action":' + "[" * DEPTH + "1" + "]" * DEPTH
         + "}").encode(), filename="deep.pfa.json"),
    "PFA cell claiming 1 GB": lambda tmp: read_document(json.dumps({
        "input": "double", "output": "double", "action": [{"+": ["input", 1]}],
        "cells": {"c": {"type": {"type": "fixed", "name": "F", "size": GIGABYTE},
                        "init": "AA=="}}}).encode(), filename="cell.pfa.json"),
    "policy nested 100,000 deep": lambda tmp: load_policy(
        "ladder = " + "[" * DEPTH + "]" * DEPTH, source="deep.toml"),
    "Avro header claiming a 1 GB schema": lambda tmp: fingerprint_file(
        _write(tmp / "header.avro", _avro_header_claiming(GIGABYTE)), schema_json=None),
    "Avro block claiming 1 GB": lambda tmp: fingerprint_file(
        _write(tmp / "block.avro", _avro_block_claiming(GIGABYTE)), schema_json=None),
    "CSV row of 100,000 fields": lambda tmp: fingerprint_file(
        _write(tmp / "wide.csv", b"segment_id,diameter_mm,pipe_age_years,pipe_material\n"
               + b"a," * DEPTH + b"\n"), schema_json=CSV_SCHEMA, format="csv"),
}


def _write(path: Path, content: bytes) -> str:
    path.write_bytes(content)
    return str(path)


@pytest.mark.timeout(300)
@pytest.mark.parametrize("case", list(HOSTILE), ids=list(HOSTILE))
def test_hostile_input_costs_bounded_memory_and_time(case, tmp_path):
    peak = peak_memory_of(lambda: HOSTILE[case](tmp_path), seconds=120)
    assert peak < MEMORY_LIMIT, f"{case}: peak {peak / 1e6:.0f} MB"
