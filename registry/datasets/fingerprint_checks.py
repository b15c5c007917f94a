"""Checks of a fingerprint a producer computed on its side, before the catalogue keeps it: what
can be recomputed is recomputed (the schema fingerprint), the rest is held to its shape and
bounds. Each failure names the field, e.g. `fingerprint/rows`."""

from __future__ import annotations

import re
from collections.abc import Mapping
from typing import Any

from registry.errors import Unprocessable

# The catalogue keeps row counts in a 32-bit integer column on every database.
MAX_ROWS = 2**31 - 1
MAX_NAME = 255  # a column name
MAX_COLUMNS = 10_000
MAX_SKETCH_K = 1 << 20
DIGEST_128 = re.compile(r"[0-9a-f]{32}")  # the content digests: sums modulo 2**128, in hex
DIGEST_256 = re.compile(r"[0-9a-f]{64}")  # SHA-256


def check_fingerprint_document(document: Any, place: str = "fingerprint") -> None:
    """Raise Unprocessable naming the first field that is malformed, out of range, or that
    disagrees with what it can be recomputed from."""
    if not isinstance(document, Mapping):
        raise Unprocessable("a fingerprint is a JSON object", place=place)
    rows = _count(document, "rows", place, MAX_ROWS, required=True)
    for name in ("content_digest", "feature_digest", "key_digest"):
        value = document.get(name)
        if value is None and name != "content_digest":
            continue
        if not isinstance(value, str) or not DIGEST_128.fullmatch(value):
            raise Unprocessable("must be 32 lower-case hexadecimal digits",
                                place=f"{place}/{name}")
    _check_schema(document, place)
    for name in ("keys", "excluded"):
        _names(document.get(name, []), f"{place}/{name}")
    profile = document.get("profile")
    if not isinstance(profile, Mapping):
        raise Unprocessable("must be an object of columns", place=f"{place}/profile")
    _names(list(profile), f"{place}/profile")
    for column, summary in profile.items():
        where = f"{place}/profile/{column}"
        if not isinstance(summary, Mapping):
            raise Unprocessable("must be an object", place=where)
        for count in ("count", "nulls"):
            if count in summary:
                _count(summary, count, where, rows)
    for name in ("sketch", "feature_sketch"):
        sketch = document.get(name)
        if sketch is None and name == "feature_sketch":
            continue
        if not isinstance(sketch, Mapping):
            raise Unprocessable("must be an object", place=f"{place}/{name}")
        _count(sketch, "k", f"{place}/{name}", MAX_SKETCH_K, required=True, least=1)


def _count(document: Mapping[str, Any], name: str, place: str, most: int, *,
           required: bool = False, least: int = 0) -> int:
    value = document.get(name)
    if value is None and not required:
        return 0
    if isinstance(value, bool) or not isinstance(value, int):
        raise Unprocessable("must be a whole number", place=f"{place}/{name}")
    if not least <= value <= most:
        raise Unprocessable(f"must be between {least} and {most}", place=f"{place}/{name}")
    return value


def _names(names: Any, place: str) -> None:
    if not isinstance(names, list) or len(names) > MAX_COLUMNS:
        raise Unprocessable(f"must be a list of at most {MAX_COLUMNS} column names", place=place)
    for name in names:
        if not isinstance(name, str) or not 0 < len(name) <= MAX_NAME:
            raise Unprocessable(f"a column name must be text of 1 to {MAX_NAME} characters",
                                place=place)


def _check_schema(document: Mapping[str, Any], place: str) -> None:
    from registry.datasets.fingerprint import schema_fingerprint
    from registry.datasets.types import MAX_NESTING
    from registry.nesting import nesting_depth

    claimed = document.get("schema_fingerprint")
    if not isinstance(claimed, str) or not DIGEST_256.fullmatch(claimed):
        raise Unprocessable("must be 64 lower-case hexadecimal digits (SHA-256)",
                            place=f"{place}/schema_fingerprint")
    schema = document.get("schema")
    if not isinstance(schema, Mapping):
        raise Unprocessable("must be the Avro record schema of the records",
                            place=f"{place}/schema")
    if nesting_depth(schema) > MAX_NESTING:
        raise Unprocessable(f"nests deeper than {MAX_NESTING} levels", place=f"{place}/schema")
    try:
        recomputed = schema_fingerprint(schema)
    except Exception as error:  # fastavro raises several kinds for a schema it cannot read
        raise Unprocessable(f"not a valid Avro schema: {error}", place=f"{place}/schema") from None
    if recomputed != claimed:
        raise Unprocessable(f"does not match the schema given (its fingerprint is "
                            f"{recomputed})", place=f"{place}/schema_fingerprint")
