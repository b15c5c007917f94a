"""The digest of a bytes column is the column digest docs/row-coverage.md defines, in the form
of revision 0010 (the bytes themselves) and in the form before it (their hex text), which the
upgrade's conversion still computes."""

from __future__ import annotations

import hashlib
import json

import pytest

from registry.service.digest_conversion import hex_bytes_digest
from registry.store import tables as t
from registry.store.row_digests import bytes_digest, column_digests

BLOCK = 1 << 20  # the conversion hashes the hex text a MiB of bytes at a time


def documented_digest(table: str, column: str, value: bytes) -> str:
    """docs/row-coverage.md, written out with hashlib alone: SHA-256 over
    `table US column US x:` and the bytes, first 32 hex digits."""
    return hashlib.sha256(f"{table}\x1f{column}\x1fx:".encode() + value).hexdigest()[:32]


def documented_digest_before_0010(table: str, column: str, value: bytes) -> str:
    """The form before revision 0010, with hashlib and json alone: SHA-256 over
    `table US column US j:` and the canonical JSON of {"bytes": hex}, first 32 hex digits."""
    text = json.dumps({"bytes": value.hex()}, sort_keys=True, separators=(",", ":"),
                      ensure_ascii=False)
    return hashlib.sha256(f"{table}\x1f{column}\x1fj:{text}".encode()).hexdigest()[:32]


@pytest.mark.parametrize("size", [0, 1, 7, BLOCK - 1, BLOCK, BLOCK + 1, 3 * BLOCK + 5])
def test_bytes_digests_equal_the_documented_definitions(size):
    value = bytes((i * 131 + size) % 256 for i in range(size))
    for given in (value, memoryview(value), bytearray(value)):
        assert bytes_digest("served_rows", "content", given) == documented_digest(
            "served_rows", "content", value)
        assert hex_bytes_digest("served_rows", "content", given) == \
            documented_digest_before_0010("served_rows", "content", value)


def test_the_two_forms_differ_and_a_text_of_the_same_bytes_differs_from_both():
    value = b"compact"
    assert len({bytes_digest("served_rows", "content", value),
                hex_bytes_digest("served_rows", "content", value),
                documented_digest("served_rows", "content", b"")}) == 3
    table = t.ServedRows.__table__
    row = {column.name: None for column in table.columns}
    row.update({"id": 4, "content": "compact", "rows": 2})  # text where bytes belong
    assert column_digests(table, row)["content"] != bytes_digest("served_rows", "content", value)


def test_column_digests_takes_the_bytes_form_for_bytes_only():
    table = t.ServedRows.__table__
    row = {column.name: None for column in table.columns}
    row.update({"id": 4, "content": b"\x00\xffcompact", "rows": 2})
    digests = column_digests(table, row)
    assert digests["content"] == documented_digest("served_rows", "content", b"\x00\xffcompact")
    assert set(digests) == {"id", "content", "rows"}
