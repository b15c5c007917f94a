"""Any JSON value either parses or raises SchemaError naming a place; never another exception."""

from __future__ import annotations

import json

from hypothesis import given, settings
from hypothesis import strategies as st

from registry.schema import SchemaError, canonical_form, load, parse, resolve, to_json

from .generators import Naming, record_json

KEYS = ["type", "name", "namespace", "fields", "symbols", "items", "values", "size", "default",
        "aliases", "doc", "order", "logicalType", "precision", "scale"]
WORDS = ["record", "enum", "fixed", "array", "map", "null", "int", "long", "string", "bytes",
         "double", "boolean", "error", "decimal", "date", "uuid", "A", "B", "a.B", "R", ""]

json_values = st.recursive(
    st.none() | st.booleans() | st.integers(-3, 20) | st.floats(allow_nan=False)
    | st.sampled_from(WORDS),
    lambda children: st.lists(children, max_size=4)
    | st.dictionaries(st.sampled_from(KEYS), children, max_size=6),
    max_leaves=25)


def parses_or_names_the_place(value):
    try:
        schema = parse(value)
    except SchemaError as error:
        assert error.place.startswith("/") and "\n" not in error.one_line()
        return
    # What parses, round-trips and resolves against itself.
    again = parse(to_json(schema))
    assert canonical_form(again) == canonical_form(schema)
    assert resolve(again, schema).compatible


@settings(max_examples=300, deadline=None, derandomize=True)
@given(value=json_values)
def test_any_json_value_parses_or_names_the_place(value):
    parses_or_names_the_place(value)


@settings(max_examples=200, deadline=None, derandomize=True)
@given(text=st.text(alphabet='{}[]":,. \n0123456789aeflnrstu-', max_size=40)
       | json_values.map(json.dumps).map(lambda t: t[:-1] if len(t) > 3 else t))
def test_any_text_loads_or_names_the_place(text):
    try:
        load(text)
    except SchemaError as error:
        assert error.place.startswith(("/", "line ")) and "\n" not in error.one_line()


@st.composite
def corrupted_schemas(draw):
    """A valid generated schema with one attribute of one object replaced or removed."""
    schema = draw(st.builds(Naming).flatmap(lambda naming: record_json(naming, depth=2)))
    objects, stack = [], [schema]
    while stack:
        item = stack.pop()
        if isinstance(item, dict):
            objects.append(item)
            stack.extend(item.values())
        elif isinstance(item, list):
            stack.extend(item)
    target = draw(st.sampled_from(objects))
    key = draw(st.sampled_from(KEYS))
    if draw(st.booleans()) and key in target:
        del target[key]
    else:
        target[key] = draw(json_values)
    return schema


@settings(max_examples=200, deadline=None, derandomize=True)
@given(value=corrupted_schemas())
def test_a_corrupted_schema_parses_or_names_the_place(value):
    parses_or_names_the_place(value)
