"""The block-by-block digest of a bytes column is the column digest docs/row-coverage.md defines."""

from __future__ import annotations

import hashlib
import json

import pytest

from registry.store import tables as t
from registry.store.row_digests import _HEX_BLOCK, bytes_digest, column_digests


def documented_digest(table: str, column: str, value: bytes) -> str:
    """docs/row-coverage.md, written out with hashlib and json alone: SHA-256 over
    `table US column US j:` and the canonical JSON of {"bytes": hex}, first 32 hex digits."""
    text = json.dumps({"bytes": value.hex()}, sort_keys=True, separators=(",", ":"),
                      ensure_ascii=False)
    return hashlib.sha256(f"{table}\x1f{column}\x1fj:{text}".encode()).hexdigest()[:32]


@pytest.mark.parametrize("size", [0, 1, 7, _HEX_BLOCK - 1, _HEX_BLOCK, _HEX_BLOCK + 1,
                                  3 * _HEX_BLOCK + 5])
def test_bytes_digest_equals_the_documented_definition(size):
    value = bytes((i * 131 + size) % 256 for i in range(size))
    assert bytes_digest("served_rows", "content", value) == documented_digest(
        "served_rows", "content", value)
    assert bytes_digest("served_rows", "content", memoryview(value)) == documented_digest(
        "served_rows", "content", value)


def test_column_digests_takes_the_block_path_for_bytes_only():
    table = t.ServedRows.__table__
    row = {column.name: None for column in table.columns}
    row.update({"id": 4, "content": b"\x00\xffcompact", "rows": 2})
    digests = column_digests(table, row)
    assert digests["content"] == documented_digest("served_rows", "content", b"\x00\xffcompact")
    assert set(digests) == {"id", "content", "rows"}
