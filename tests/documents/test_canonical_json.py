"""Canonical JSON (RFC 8785 rules, with exact 64-bit integers): vectors, invariance, errors."""

import json
import re
import random
import struct

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from registry.documents.canonical_json import (MalformedJson, canonical_digest, canonical_json,
                                               format_double)

# RFC 8785, Appendix B: IEEE 754 doubles (as hex bit patterns) and their serialisation.
RFC_8785_NUMBERS = {
    "0000000000000000": "0",
    "8000000000000000": "0",
    "0000000000000001": "5e-324",
    "8000000000000001": "-5e-324",
    "7fefffffffffffff": "1.7976931348623157e+308",
    "ffefffffffffffff": "-1.7976931348623157e+308",
    "4340000000000000": "9007199254740992",
    "c340000000000000": "-9007199254740992",
    "4430000000000000": "295147905179352830000",
    "44b52d02c7e14af5": "9.999999999999997e+22",
    "44b52d02c7e14af6": "1e+23",
    "44b52d02c7e14af7": "1.0000000000000001e+23",
    "444b1ae4d6e2ef4e": "999999999999999700000",
    "444b1ae4d6e2ef4f": "999999999999999900000",
    "444b1ae4d6e2ef50": "1e+21",
    "3eb0c6f7a0b5ed8c": "9.999999999999997e-7",
    "3eb0c6f7a0b5ed8d": "0.000001",
    "41b3de4355555553": "333333333.3333332",
    "41b3de4355555554": "333333333.33333325",
    "41b3de4355555555": "333333333.3333333",
    "41b3de4355555556": "333333333.3333334",
    "41b3de4355555557": "333333333.33333343",
    "becbf647612f3696": "-0.0000033333333333333333",
    "43143ff3c1cb0959": "1424953923781206.2",
}


@pytest.mark.parametrize(("bits", "expected"), RFC_8785_NUMBERS.items())
def test_doubles_are_written_as_rfc_8785_appendix_b_says(bits, expected):
    value = struct.unpack(">d", bytes.fromhex(bits))[0]
    assert format_double(value) == expected
    # The same inside a document, as a lone number and inside a run of numbers.
    assert canonical_json(repr(value).encode()) == expected.encode()
    assert canonical_json(f"[1.5, {value!r}, 2.5]".encode()) == f"[1.5,{expected},2.5]".encode()


def test_members_are_sorted_by_utf16_code_units():
    # RFC 8785, section 3.2.3, the sorting example: the emoji (a surrogate pair, D83D) sorts
    # before U+FB33, although its code point is larger.
    text = ('{"\\u20ac": 1, "\\r": 2, "\\ufb33": 3, "1": 4, "\\ud83d\\ude00": 5, '
            '"\\u0080": 6, "\\u00f6": 7}')
    expected = '{"\\r":2,"1":4,"\u0080":6,"\u00f6":7,"\u20ac":1,"\U0001F600":5,"\ufb33":3}'
    assert canonical_json(text.encode()) == expected.encode("utf-8")


def test_strings_keep_only_the_escapes_json_requires():
    # RFC 8785, section 3.2.2.2: \b \t \n \f \r \" \\ as short escapes, other controls as
    # \u00xx in lower case, everything else as UTF-8 (U+2028 and DEL included).
    text = '"\\u0041\\/\\b\\t\\n\\f\\r\\"\\\\\\u001f\\u007f\\u2028\\u00e9"'
    expected = '"A/\\b\\t\\n\\f\\r\\"\\\\\\u001f\x7f\u2028\u00e9"'
    assert canonical_json(text.encode()) == expected.encode("utf-8")


@pytest.mark.parametrize("literal", [b"1", b"1.0", b"1e0", b"1E+0", b"10e-1", b"1.000",
                                     b"0.1e1"])
def test_spellings_of_one_number_are_one_canonical_number(literal):
    assert canonical_json(literal) == b"1"
    assert canonical_json(b"[" + literal + b"]") == b"[1]"


def test_integers_that_fit_a_long_keep_their_exact_digits():
    # 2^53 + 1 has no exact double; as a PFA long it must not be rounded.
    assert canonical_json(b"[9007199254740993]") == b"[9007199254740993]"
    assert canonical_json(b"9223372036854775807") == b"9223372036854775807"
    # A double literal, or an integer beyond a long, is read as a double.
    assert canonical_json(b"[9007199254740993.0]") == b"[9007199254740992]"
    assert canonical_json(b"[18446744073709551616]") == b"[18446744073709552000]"
    assert canonical_json(b"[-0, -0.0, 0e5]") == b"[0,0,0]"


def test_a_long_run_of_numbers_matches_number_by_number_conversion():
    generator = random.Random(7)
    values = []
    for index in range(20000):
        choice = index % 6
        if choice == 0:
            values.append(repr(generator.random()))
        elif choice == 1:
            values.append(str(generator.randint(-10**6, 10**6)))
        elif choice == 2:
            values.append(f"{generator.random():.3e}")
        elif choice == 3:
            values.append(str(generator.randint(2**53, 2**62)))
        elif choice == 4:
            values.append(repr(generator.uniform(-1e30, 1e30)))
        else:
            values.append("-0.0")
    text = "[" + " , ".join(values) + "]"
    one_by_one = b",".join(canonical_json(value.encode()) for value in values)
    assert canonical_json(text.encode()) == b"[" + one_by_one + b"]"


def _reference(value):
    """Canonical form of a decoded value, written recursively and independently of the streamer."""
    if value is None or isinstance(value, bool):
        return json.dumps(value)
    if isinstance(value, int):
        return str(value) if -2**63 <= value < 2**63 else format_double(float(value))
    if isinstance(value, float):
        return format_double(value)
    if isinstance(value, str):
        return json.dumps(value, ensure_ascii=False)
    if isinstance(value, list):
        return "[" + ",".join(map(_reference, value)) + "]"
    keys = sorted(value, key=lambda key: key.encode("utf-16-be", "surrogatepass"))
    return "{" + ",".join(f"{json.dumps(key, ensure_ascii=False)}:{_reference(value[key])}"
                          for key in keys) + "}"


# Any text, and text of the characters where name sorting has edge cases: the quote and the
# colon around a name, characters below the quote, escapes, non-ASCII, a surrogate pair.
text_values = st.text(st.characters(blacklist_categories=("Cs",)), max_size=8) | st.text(
    st.sampled_from(list(':"\\ !#a\u00e9\U0001F600\ufb33\t')), max_size=4)
json_values = st.recursive(
    st.none() | st.booleans() | st.integers(-10**25, 10**25) | text_values
    | st.floats(allow_nan=False, allow_infinity=False),
    lambda children: st.lists(children, max_size=6)
    | st.dictionaries(text_values, children, max_size=6),
    max_leaves=40)


@settings(max_examples=150, deadline=None)
@given(value=json_values, indent=st.sampled_from([None, 0, 2, "\t"]),
       ensure_ascii=st.booleans(), sort_keys=st.booleans())
def test_any_formatting_of_a_value_has_the_reference_canonical_form(value, indent,
                                                                    ensure_ascii, sort_keys):
    text = json.dumps(value, indent=indent, ensure_ascii=ensure_ascii, sort_keys=sort_keys)
    assert canonical_json(text.encode("utf-8")) == _reference(value).encode("utf-8")


def test_the_digest_is_sha256_of_the_canonical_form_and_measures_what_is_asked():
    import hashlib

    data = b'{"cells": {"w": {"init": [1, 2.0, 3], "type": "int"}}, "input": "int"}'
    digest = canonical_digest(data, measure=[("cells", "*", "init")])
    canonical = canonical_json(data)
    assert digest.sha256 == hashlib.sha256(canonical).hexdigest()
    assert digest.size == len(canonical)
    measured = digest.measured[("cells", "w", "init")]
    assert (measured.size, measured.items, measured.kind) == (len(b"[1,2,3]"), 3, "array")
    assert data[measured.start:measured.end] == b"[1, 2.0, 3]"


@pytest.mark.parametrize(("text", "place", "message"), [
    (b"", "line 1, column 1", "no JSON value"),
    (b'{"a": 1,\n "b": }', "line 2, column 7", "expected a value"),
    (b'{"a": 1,}', "line 1, column 9", "member name"),
    (b"[1, 2", "line 1, column 6", "ends inside"),
    (b'{"a": 1 "b": 2}', "line 1, column 9", "',' or '}'"),
    (b"[1.5e]", "line 1, column 5", "',' or ']'"),
    (b'{"a": 1, "a": 2}', "line 1, column 1", "appears twice"),
    (b'[{"\\u00e9": 1, "\xc3\xa9": 2}]', "line 1, column 2", "appears twice"),
    (b'{":": 1, "a": 2, ":": 3}', "line 1, column 1", "':' appears twice"),
    (b"[1, 1e400]", "line 1, column 5", "too large"),
    (b"[1, " + b"7" * 5000 + b"]", "line 1, column 5", "too large"),
    (b"[NaN]", "line 1, column 2", "expected a value"),
    (b'"\\ud800"', "line 1, column 1", "not valid Unicode"),
    (b'"\xff"', "line 1, column 1", "not valid Unicode"),
    (b'"tab\tinside"', "line 1, column 1", "invalid string"),
    (b"[1] [2]", "line 1, column 5", "more data"),
])
def test_malformed_json_names_line_and_column(text, place, message):
    with pytest.raises(MalformedJson, match=message) as caught:
        canonical_json(text)
    assert caught.value.place == place


def _documented_vectors():
    from pathlib import Path

    text = (Path(__file__).resolve().parents[2] / "docs" / "document-digest.md").read_text(
        encoding="utf-8")
    rows = re.findall(r"^\| `(.+)` \| `(.+)` \|$", text, flags=re.MULTILINE)
    digest = re.search(r"that is\n`([0-9a-f]{64})`", text).group(1)
    return rows, digest


def test_the_vectors_in_the_digest_document_hold():
    import hashlib

    rows, digest = _documented_vectors()
    assert len(rows) >= 9
    for given_text, expected in rows:
        assert canonical_json(given_text.encode("utf-8")) == expected.encode("utf-8")
    smallest = canonical_json(rows[-1][0].encode("utf-8"))
    assert hashlib.sha256(smallest).hexdigest() == digest


def test_large_values_and_every_kind_of_member_name_sort_as_the_reference_says():
    generator = random.Random(5)
    big = [generator.random() for _ in range(8000)]  # canonical text well over 64 KB
    names = ["b", "a", "a b", "a!", "", "é", "\U0001F600", "\ufb33", "tab\t", 'quote"', "z",
             ":", '":', "a:b", "a:"]
    value = {}
    for index, name in enumerate(names):
        value[name] = big if index % 3 == 0 else {"nested": big, "n": index}
        value[f"plain{index}"] = index
    plain_first = {f"k{index}": big for index in range(3)} | {"k 3": 1}
    colons = {":": 1, "::": {"x": big}, "a:": 2, "a": 3, '"': 4}  # plain names holding ":"
    for document in (value, plain_first, {"only": {"plain": big}}, colons):
        text = json.dumps(document, indent=1).encode()
        assert canonical_json(text) == _reference(document).encode("utf-8")
