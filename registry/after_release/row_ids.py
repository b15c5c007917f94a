"""Row ids as 64-bit hashes: what the catalogue keeps of them to join outcomes and versions.

Ids are compared by their text: an integer id 42 and the string "42" are the same row, so a
serving system and the team that sends outcomes need not agree on a column type. Two distinct
ids share a hash with probability about n^2 / 2^65 (1 in 370,000 for ten million rows).
"""

from __future__ import annotations

from typing import cast

import numpy as np
import pyarrow as pa

from registry.lazy_import import lazy_import

kernels = lazy_import("registry.after_release.row_id_kernels")  # loads numba on first use


def as_text(array: pa.Array | pa.ChunkedArray) -> pa.Array:
    """The ids as UTF-8 strings (integers in decimal)."""
    if isinstance(array, pa.ChunkedArray):
        array = array.combine_chunks()
    if pa.types.is_dictionary(array.type):
        array = cast(pa.DictionaryArray, array).dictionary_decode()
    if not (pa.types.is_string(array.type) or pa.types.is_large_string(array.type)):
        array = array.cast(pa.string())
    return array


def hash_row_ids(array: pa.Array | pa.ChunkedArray) -> np.ndarray:
    """One uint64 per id (nulls are refused before ids are hashed)."""
    array = as_text(array)
    out = np.empty(len(array), np.uint64)
    if len(array) == 0:
        return out
    offset_type = np.int64 if pa.types.is_large_string(array.type) else np.int32
    offsets_buffer, data_buffer = array.buffers()[1:3]
    assert offsets_buffer is not None  # a string array always has its offsets
    offsets = np.frombuffer(memoryview(offsets_buffer), offset_type)[
        array.offset:array.offset + len(array) + 1]
    data = (np.frombuffer(memoryview(data_buffer), np.uint8) if data_buffer is not None
            else np.zeros(0, np.uint8))
    kernels.hash_strings(offsets, data, out)
    return out


def first_repeat(hashes: np.ndarray) -> int:
    """The index of the first hash equal to an earlier one, or -1 when all are distinct."""
    return int(kernels.first_repeat(np.ascontiguousarray(hashes, dtype=np.uint64)))


class HashIndex:
    """Distinct row hashes, and which of them a stream of other hashes meets: a set probed in
    one pass per part, where numpy's isin would sort both sides again for every part."""

    def __init__(self, keys: np.ndarray) -> None:
        self.keys = np.ascontiguousarray(keys, dtype=np.uint64)
        self._table = kernels.index_of(self.keys)

    def found_in(self, hashes: np.ndarray) -> np.ndarray:
        """For each key, whether it is among `hashes`."""
        found = np.zeros(len(self.keys), np.bool_)
        if len(hashes) and len(self.keys):
            kernels.mark_found(*self._table, np.ascontiguousarray(hashes, dtype=np.uint64),
                               found)
        return found

    def positions_of(self, hashes: np.ndarray) -> np.ndarray:
        """For each of `hashes`, its position among the keys, or -1."""
        out = np.empty(len(hashes), np.int64)
        if len(self.keys) == 0:
            out.fill(-1)
        elif len(hashes):
            kernels.positions_in(*self._table, np.ascontiguousarray(hashes, dtype=np.uint64),
                                 out)
        return out


def hash_row_ids_reference(ids: list[str]) -> np.ndarray:
    """The definition in plain Python, for the kernel's tests."""
    mask = (1 << 64) - 1
    out = []
    for text in ids:
        h = 0xCBF29CE484222325
        for byte in text.encode("utf-8"):
            h = ((h ^ byte) * 0x100000001B3) & mask
        h ^= h >> 30
        h = (h * 0xBF58476D1CE4E5B9) & mask
        h ^= h >> 27
        h = (h * 0x94D049BB133111EB) & mask
        h ^= h >> 31
        out.append(h)
    return np.array(out, dtype=np.uint64)
