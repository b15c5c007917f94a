"""Text and enum inputs of a Parquet batch are checked and counted through their dictionary:
the same counts, and the same refusals naming the same row, as value by value."""

from __future__ import annotations

from collections import Counter
from datetime import UTC, datetime

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from registry.after_release.served_batch import ServingContext, VersionFacts, read_served_batch
from registry.after_release.timeline import Spell
from registry.datasets.categories import counts_of
from registry.datasets.errors import ValueNotParsing
from registry.datasets.types import record_type
from registry.errors import UserError

SYMBOLS = ["CI", "DI", "PVC"]
INPUT = {"type": "record", "name": "Reading", "fields": [
    {"name": "district", "type": "string"},
    {"name": "material", "type": {"type": "enum", "name": "Material", "symbols": SYMBOLS}},
    {"name": "note", "type": ["null", "string"]}]}
START = int(datetime(2026, 3, 2, tzinfo=UTC).timestamp() * 1_000_000)


def context() -> ServingContext:
    facts = VersionFacts(1, record_type(INPUT), "binary", spells=(Spell(START, None, ("live",)),))
    return ServingContext("m", {1: facts}, 86400, ("live",))


def batch(rows: int, district, material, note=None) -> pa.Table:
    return pa.table({
        "row_id": pa.array([f"r{i}" for i in range(rows)]),
        "served_at": pa.array(START + np.arange(rows, dtype=np.int64) * 1000,
                              pa.timestamp("us", tz="UTC")),
        "version": pa.array(np.ones(rows, np.int64)),
        "score": pa.array(np.linspace(0, 1, rows)),
        "district": pa.array(district, pa.string()), "material": pa.array(material, pa.string()),
        "note": pa.array(note if note is not None else [None] * rows, pa.string())})


@pytest.mark.parametrize("use_dictionary", [True, False])
def test_text_inputs_are_counted_as_a_plain_count_of_their_values(tmp_path, use_dictionary):
    rng = np.random.default_rng(7)
    rows = 5000
    district = rng.choice(["NG", "RS", "OT", "HC"], rows).tolist()
    material = rng.choice(SYMBOLS, rows).tolist()
    note = [None if i % 3 else f"n{i % 11}" for i in range(rows)]
    path = tmp_path / "b.parquet"
    # several row groups, each with a dictionary of its own (or none at all)
    pq.write_table(batch(rows, district, material, note), path, row_group_size=1200,
                   use_dictionary=use_dictionary)
    checked = read_served_batch(str(path), context())
    (summary,) = [rows_.summary for rows_ in checked.groups.values()]
    # the reference: Python's collections.Counter over the values as written
    for name, values in (("district", district), ("material", material), ("note", note)):
        counts = summary.inputs[name].categories
        assert counts.as_dict() == dict(Counter(v for v in values if v is not None))
        assert counts.total == sum(v is not None for v in values)
        assert summary.inputs[name].nulls == sum(v is None for v in values)


def test_an_enum_value_outside_the_symbols_is_refused_at_its_row(tmp_path):
    material = ["CI"] * 3000
    material[2500] = "STEEL"
    path = tmp_path / "b.parquet"
    pq.write_table(batch(3000, ["NG"] * 3000, material), path, row_group_size=1000)
    with pytest.raises(ValueNotParsing) as raised:
        read_served_batch(str(path), context())
    assert raised.value.place == "row 2501, column material"
    assert "'STEEL' is not a symbol of the enum" in str(raised.value)


def test_a_dictionary_value_no_row_uses_is_not_refused(tmp_path):
    table = batch(4, ["NG"] * 4, ["CI"] * 4)
    material = pa.DictionaryArray.from_arrays(pa.array([0, 0, 2, 0], pa.int32()),
                                              pa.array(["CI", "STEEL", "DI"]))
    table = table.set_column(table.schema.get_field_index("material"), "material", material)
    path = tmp_path / "b.parquet"
    pq.write_table(table, path)
    (held,) = read_served_batch(str(path), context()).groups.values()
    assert held.summary.inputs["material"].categories.as_dict() == {"CI": 3, "DI": 1}


def test_a_missing_text_value_is_refused_at_its_row(tmp_path):
    district = ["NG"] * 2000
    district[1500] = None
    path = tmp_path / "b.parquet"
    pq.write_table(batch(2000, district, ["CI"] * 2000), path, row_group_size=700)
    with pytest.raises(ValueNotParsing) as raised:
        read_served_batch(str(path), context())
    assert raised.value.place == "row 1501, column district"


def test_a_dictionary_repeating_a_value_is_counted_by_value():
    array = pa.DictionaryArray.from_arrays(pa.array([0, 1, 2, 1, None, 3], pa.int32()),
                                           pa.array(["a", "b", "a", "c"]))
    assert counts_of(array).as_dict() == dict(Counter(["a", "b", "a", "b", "c"]))


def test_windows_taken_as_runs_or_picked_row_by_row_hold_the_same_rows(tmp_path):
    """A batch in time order splits into its windows as runs of rows (slices, no copy); the
    same rows shuffled are picked out row by row: both give the same summaries and rows."""
    from registry.datasets.profile import is_close_profile

    rng = np.random.default_rng(11)
    rows = 6000
    table = batch(rows, rng.choice(["NG", "RS"], rows).tolist(),
                  rng.choice(SYMBOLS, rows).tolist())
    # three days' windows, 30 seconds apart, starting mid-morning
    times = START + 36_000_000_000 + np.arange(rows, dtype=np.int64) * 30_000_000
    table = table.set_column(1, "served_at", pa.array(times, pa.timestamp("us", tz="UTC")))
    ordered, shuffled = tmp_path / "ordered.parquet", tmp_path / "shuffled.parquet"
    pq.write_table(table, ordered, row_group_size=2500)
    pq.write_table(table.take(rng.permutation(rows)), shuffled, row_group_size=2500)
    runs = read_served_batch(str(ordered), context()).groups
    picked = read_served_batch(str(shuffled), context()).groups
    assert sorted(runs) == sorted(picked) and len(runs) == 3
    for key in runs:
        a, b = runs[key], picked[key]
        assert a.summary.rows == b.summary.rows
        assert (a.summary.first_served_at, a.summary.last_served_at) == (
            b.summary.first_served_at, b.summary.last_served_at)
        for name in ("score",):
            assert is_close_profile(a.summary.predictions[name], b.summary.predictions[name])
        for name in ("district", "material"):
            assert is_close_profile(a.summary.inputs[name], b.summary.inputs[name])
        order_a = np.argsort(a.columns()["row_hash"])
        order_b = np.argsort(b.columns()["row_hash"])
        assert np.array_equal(a.columns()["row_hash"][order_a], b.columns()["row_hash"][order_b])
        assert np.array_equal(a.columns()["score"][order_a], b.columns()["score"][order_b])


@pytest.mark.parametrize("repeat_at", [10, 1700, 5999])
def test_a_repeated_row_id_is_refused_at_its_second_row_wherever_the_parts_fall(tmp_path,
                                                                                 repeat_at):
    """Ids are gathered part by part as the batch is read; the row named is the first whose
    id came before, in the first part, across parts, or in the last row."""
    rows = 6000
    table = batch(rows, ["NG"] * rows, ["CI"] * rows)
    ids = [f"r{i}" for i in range(rows)]
    ids[repeat_at] = ids[3]
    if repeat_at < rows - 1:
        ids[rows - 1] = ids[4]  # a later repeat too
    table = table.set_column(0, "row_id", pa.array(ids))
    path = tmp_path / "b.parquet"
    pq.write_table(table, path, row_group_size=1000)
    with pytest.raises(UserError) as raised:
        read_served_batch(str(path), context())
    assert raised.value.place == f"row {repeat_at + 1}, column row_id"
