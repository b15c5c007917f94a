"""Reading under a schema: defaults for missing fields, logical types, CSV nulls and booleans."""

from __future__ import annotations

import copy
import datetime

from dataset_files import SEGMENT_SCHEMA, write_avro, write_csv, write_parquet

from registry.datasets import fingerprint_file


def schema_without_repairs() -> dict:
    schema = copy.deepcopy(SEGMENT_SCHEMA)
    schema["fields"] = [f for f in schema["fields"] if f["name"] != "repairs_5y"]
    return schema


def test_a_field_missing_from_the_file_takes_its_default(tmp_path, records):
    older = [{k: v for k, v in r.items() if k != "repairs_5y"} for r in records]
    defaulted = [dict(r, repairs_5y=None) for r in records]
    expected = fingerprint_file(str(write_avro(tmp_path / "full.avro", defaulted)),
                                schema_json=SEGMENT_SCHEMA)
    # Avro: schema resolution by fastavro fills the reader's default
    avro = fingerprint_file(str(write_avro(tmp_path / "old.avro", older,
                                           schema=schema_without_repairs())),
                            schema_json=SEGMENT_SCHEMA)
    parquet = fingerprint_file(str(write_parquet(tmp_path / "old.parquet", older)),
                               schema_json=SEGMENT_SCHEMA)
    assert avro.content_digest == parquet.content_digest == expected.content_digest
    assert parquet.profile["repairs_5y"].nulls == len(records)


def test_logical_types_hash_as_their_underlying_type(tmp_path):
    dated = {"type": "record", "name": "Inspection", "fields": [
        {"name": "inspected_on", "type": {"type": "int", "logicalType": "date"}}]}
    plain = {"type": "record", "name": "Inspection", "fields": [
        {"name": "inspected_on", "type": "int"}]}
    day = datetime.date(2026, 3, 14)
    with_dates = fingerprint_file(
        str(write_avro(tmp_path / "dated.avro", [{"inspected_on": day}], schema=dated)),
        schema_json=None)
    as_days = fingerprint_file(
        str(write_avro(tmp_path / "plain.avro",
                       [{"inspected_on": (day - datetime.date(1970, 1, 1)).days}], schema=plain)),
        schema_json=None)
    assert with_dates.content_digest == as_days.content_digest


def test_csv_empty_field_is_null_in_a_nullable_column_and_quoted_empty_is_a_string(tmp_path):
    schema = {"type": "record", "name": "Note", "fields": [
        {"name": "text", "type": ["null", "string"]}, {"name": "done", "type": "boolean"}]}
    path = tmp_path / "notes.csv"
    path.write_text('text,done\n,true\n"",false\nleak,TRUE\n', encoding="utf-8")
    found = fingerprint_file(str(path), schema_json=schema)
    avro = write_avro(tmp_path / "notes.avro", [{"text": None, "done": True},
                                                  {"text": "", "done": False},
                                                  {"text": "leak", "done": True}], schema=schema)
    assert found.content_digest == fingerprint_file(str(avro), schema_json=schema).content_digest
    assert found.profile["text"].nulls == 1


def test_csv_and_parquet_files_without_their_extension_are_recognised(tmp_path, records):
    parquet = write_parquet(tmp_path / "segments.bin", records)
    csv = write_csv(tmp_path / "segments.txt", records)
    assert fingerprint_file(str(parquet), schema_json=SEGMENT_SCHEMA).content_digest == \
        fingerprint_file(str(csv), schema_json=SEGMENT_SCHEMA).content_digest


def test_a_byte_order_mark_before_the_csv_header_is_no_part_of_a_name(tmp_path, records):
    plain = write_csv(tmp_path / "plain.csv", records[:20])
    marked = tmp_path / "marked.csv"
    marked.write_bytes(b"\xef\xbb\xbf" + plain.read_bytes())
    assert fingerprint_file(str(marked), schema_json=SEGMENT_SCHEMA).content_digest == \
        fingerprint_file(str(plain), schema_json=SEGMENT_SCHEMA).content_digest


def test_parquet_dates_and_timestamps_read_as_the_numbers_of_their_logical_types(tmp_path):
    import pyarrow as pa
    import pyarrow.parquet as pq

    schema = {"type": "record", "name": "Inspection", "fields": [
        {"name": "inspected_on", "type": {"type": "int", "logicalType": "date"}},
        {"name": "logged_at", "type": {"type": "long", "logicalType": "timestamp-millis"}}]}
    day = datetime.date(2026, 3, 14)
    moment = datetime.datetime(2026, 3, 14, 6, 30, tzinfo=datetime.timezone.utc)
    records = [{"inspected_on": day, "logged_at": moment}]
    avro = write_avro(tmp_path / "i.avro", records, schema=schema)
    parquet = tmp_path / "i.parquet"
    pq.write_table(pa.table({"inspected_on": pa.array([day]),
                             "logged_at": pa.array([moment], type=pa.timestamp("us", "UTC"))}),
                   parquet)
    assert fingerprint_file(str(parquet), schema_json=schema).content_digest == \
        fingerprint_file(str(avro), schema_json=schema).content_digest


def test_an_avro_int_read_from_parquet_holds_32_bits_whatever_integer_type_stores_it(tmp_path):
    """Avro specification, Primitive Types: int is a 32-bit signed integer. A 64-bit Parquet
    column is checked value by value; narrower ones need no check, nulls included."""
    import pyarrow as pa
    import pyarrow.parquet as pq
    import pytest

    from registry.errors import UserError

    schema = {"type": "record", "name": "Count", "fields": [
        {"name": "n", "type": ["null", "int"]}]}
    values = [7, None, -(2**31), 2**31 - 1]
    digests = set()
    for arrow_type in (pa.int8(), pa.int16(), pa.int32(), pa.uint16(), pa.int64()):
        path = tmp_path / f"{arrow_type}.parquet"
        fitting = [v if v is None or arrow_type.bit_width >= 32 else v % 100 for v in values]
        pq.write_table(pa.table({"n": pa.array(fitting, arrow_type)}), path)
        found = fingerprint_file(str(path), schema_json=schema)
        assert found.profile["n"].nulls == 1
        if arrow_type.bit_width >= 32:
            digests.add(found.content_digest)
    assert len(digests) == 1  # int32 and int64 columns of the same values read alike
    too_large = tmp_path / "too-large.parquet"
    pq.write_table(pa.table({"n": pa.array([1, None, 2**31], pa.int64())}), too_large)
    with pytest.raises(UserError, match="does not fit an Avro int") as refused:
        fingerprint_file(str(too_large), schema_json=schema)
    assert refused.value.place == "row 3, column n"
