"""Canonical per-record hashes, computed a column at a time with numpy.

The encoding is specified in docs/canonical-values.md; this module is its implementation and the
document's test vectors are checked against it. A record hash has two 64-bit lanes; lane 1 is the
high half of the 128-bit record hash and also the value the overlap sketches sample.
"""

from __future__ import annotations

import hashlib
from functools import lru_cache
from typing import cast

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from registry.datasets.numeric_columns import HashTarget
from registry.datasets.types import RecordType, ValueType
from registry.lazy_import import lazy_import

kernels = lazy_import("registry.datasets.kernels")  # loads numba on first use

HASH_KEY = b"lockkeeper/canonical-values/v1"
GOLDEN = np.uint64(0x9E3779B97F4A7C15)  # 2^64 / golden ratio, as in splitmix64
_M1 = np.uint64(0xBF58476D1CE4E5B9)
_M2 = np.uint64(0x94D049BB133111EB)
_S30, _S27, _S31 = np.uint64(30), np.uint64(27), np.uint64(31)
CANONICAL_NAN = np.uint64(0x7FF8000000000000)

# Kind tags of the canonical encoding (docs/canonical-values.md, "Kinds").
NULL, BOOLEAN, INTEGER, FLOAT, STRING, BYTES, RECORD, ARRAY, MAP = range(9)
KIND_OF_AVRO = {  # a union has no kind of its own: each value has its branch's
    "null": NULL, "boolean": BOOLEAN, "int": INTEGER, "long": INTEGER, "float": FLOAT,
    "double": FLOAT, "string": STRING, "enum": STRING, "bytes": BYTES, "fixed": BYTES,
    "record": RECORD, "array": ARRAY, "map": MAP,
}
KEY_FIELD = ""  # the field name under which key values are hashed alone (not an Avro name)


@lru_cache(maxsize=4096)
def field_key(kind: int, name: str) -> tuple[np.uint64, np.uint64]:
    """K(kind, name): the two lane keys of a field, from keyed BLAKE2b (RFC 7693)."""
    digest = hashlib.blake2b(bytes([kind]) + name.encode("utf-8"), digest_size=16,
                             key=HASH_KEY).digest()
    return (np.uint64(int.from_bytes(digest[:8], "little")),
            np.uint64(int.from_bytes(digest[8:], "little")))


def mix64(x: np.ndarray) -> np.ndarray:
    """The splitmix64 finaliser (Steele, Lea and Flood 2014), in place on a uint64 array."""
    t = np.empty_like(x)
    np.right_shift(x, _S30, out=t)
    x ^= t
    x *= _M1
    np.right_shift(x, _S27, out=t)
    x ^= t
    x *= _M2
    np.right_shift(x, _S31, out=t)
    x ^= t
    return x


def record_lanes(batch: pa.RecordBatch, record: RecordType,
                 names: tuple[str, ...] | None = None) -> tuple[np.ndarray, np.ndarray]:
    """The two lanes of every record's hash, over the named fields (all fields by default)."""
    sums = field_sums(batch, record, record.names if names is None else names)
    return finish(sums, RECORD)


def field_sums(batch: pa.RecordBatch, record: RecordType,
               names: tuple[str, ...]) -> tuple[np.ndarray, np.ndarray]:
    """Sum over fields of each field's contribution C(name, value), per lane."""
    rows = batch.num_rows
    s0 = np.zeros(rows, dtype=np.uint64)
    s1 = np.zeros(rows, dtype=np.uint64)
    for name in names:
        c0, c1 = contributions(batch.column(name), record.field(name), name)
        s0 += c0
        s1 += c1
    return s0, s1


def finish(sums: tuple[np.ndarray, np.ndarray], kind: int) -> tuple[np.ndarray, np.ndarray]:
    """W = mix64(sum XOR K(kind, "")) per lane: the word of a record, array or map."""
    k0, k1 = field_key(kind, "")
    return mix64(sums[0] ^ k0), mix64(sums[1] ^ k1)


def contributions(array: pa.Array, value_type: ValueType,
                  name: str) -> tuple[np.ndarray, np.ndarray]:
    """C(name, v) for every value of one column, per lane.

    A value of one word w (null, boolean, integer, float) contributes x = mix64(w XOR K0) to
    lane 0 and x * (K1 OR 1) to lane 1; a value of two words (W0, W1) contributes
    mix64(W0 XOR K0) and mix64(W1 XOR K1). K = K(kind(v), name)."""
    if isinstance(array, pa.ChunkedArray):
        array = array.combine_chunks()
    if value_type.avro == "union":
        return _union_contributions(cast(pa.UnionArray, array), value_type, name)
    kind = KIND_OF_AVRO[value_type.avro]
    w0, w1 = words(array, value_type)
    k0: np.uint64 | np.ndarray  # one key for the column, or one per row once nulls are keyed
    k1: np.uint64 | np.ndarray
    k0, k1 = field_key(kind, name)
    one_word = w1 is w0
    valid = _validity(array) if array.null_count else None
    if valid is not None and one_word:
        n0, n1 = field_key(NULL, name)
        k0 = np.where(valid, k0, n0)
        k1 = np.where(valid, k1, n1)
    if one_word:  # one strong mix, the second lane a multiple of it
        c0 = mix64(np.bitwise_xor(w0, k0, out=w0 if w0.flags.writeable else None))
        # (views of Arrow buffers are read-only; fresh word arrays are ours to overwrite)
        return c0, c0 * (k1 | np.uint64(1))
    c0, c1 = mix64(np.bitwise_xor(w0, k0)), mix64(np.bitwise_xor(w1, k1))
    if valid is not None:  # a null is the one word 0 of kind null, whatever the column's type
        null0, null1 = null_contributions(name)
        c0 = np.where(valid, c0, null0).astype(np.uint64)
        c1 = np.where(valid, c1, null1).astype(np.uint64)
    return c0, c1


@lru_cache(maxsize=4096)
def null_contributions(name: str) -> tuple[np.uint64, np.uint64]:
    """C(name, null) per lane: the one word 0 of kind null."""
    n0, n1 = field_key(NULL, name)
    null0 = mix64(np.array([n0], dtype=np.uint64))[0]
    return null0, np.uint64((int(null0) * (int(n1) | 1)) % (1 << 64))


def hash_target(value_type: ValueType, name: str, sums0: np.ndarray,
                sums1: np.ndarray) -> HashTarget:
    """Where the numeric kernel adds a one-word column's contributions, with its keys."""
    k0, k1 = field_key(KIND_OF_AVRO[value_type.avro], name)
    null0, null1 = null_contributions(name)
    return HashTarget(sums0, sums1, k0, k1 | np.uint64(1), null0, null1)


def _union_contributions(array: pa.UnionArray, value_type: ValueType,
                         name: str) -> tuple[np.ndarray, np.ndarray]:
    """A union value contributes as the value of its branch; the branch itself is not hashed."""
    codes = np.asarray(array.type_codes)
    offsets = np.asarray(array.offsets)
    c0 = np.zeros(len(array), np.uint64)
    c1 = np.zeros(len(array), np.uint64)
    branch_types = (ValueType("null", nullable=True),) + value_type.branches
    for code, branch in enumerate(branch_types):
        chosen = np.flatnonzero(codes == code)
        if len(chosen):
            b0, b1 = contributions(array.field(code), branch, name)
            c0[chosen], c1[chosen] = b0[offsets[chosen]], b1[offsets[chosen]]
    return c0, c1


def words(array: pa.Array, value_type: ValueType) -> tuple[np.ndarray, np.ndarray]:
    """W(v) per lane for one column; nulls get the word 0 (their kind tells them apart)."""
    avro = value_type.avro
    if avro == "null":
        zeros = np.zeros(len(array), dtype=np.uint64)
        return zeros, zeros
    if avro == "boolean":
        values = array.fill_null(False).to_numpy(zero_copy_only=False).astype(np.uint64)
        return values, values
    if avro in ("int", "long"):
        values = _numbers(array, np.int64).view(np.uint64)
        return values, values
    if avro in ("float", "double"):
        values = canonical_float_bits(_numbers(array, np.float64))
        return values, values
    if avro in ("string", "enum", "bytes", "fixed"):
        return byte_string_words(array)
    if avro == "record":
        sums = (np.zeros(len(array), np.uint64), np.zeros(len(array), np.uint64))
        for index, (child_name, child_type) in enumerate(value_type.fields):
            c0, c1 = contributions(cast(pa.StructArray, array).field(index), child_type,
                                   child_name)
            sums[0][:] += c0
            sums[1][:] += c1
        return _zero_nulls(finish(sums, RECORD), array)
    if avro in ("array", "map"):
        return _zero_nulls(_collection_words(array, value_type), array)
    raise AssertionError(avro)


def canonical_float_bits(values: np.ndarray) -> np.ndarray:
    """IEEE 754 binary64 bits with -0.0 folded into 0.0 and every NaN into one quiet NaN."""
    bits = (values + 0.0).view(np.uint64)  # -0.0 + 0.0 is +0.0 under round-to-nearest
    if len(values) and np.isnan(values.min()):  # min is NaN exactly when some value is
        bits[np.isnan(values)] = CANONICAL_NAN
    return bits


def byte_string_words(array: pa.Array) -> tuple[np.ndarray, np.ndarray]:
    """W(s) = mix64((len XOR B) + sum_i mix64(w_i XOR (B + (i+1)*GOLDEN))) per lane, with
    B = K(kind, "") and w_i the zero-padded 8-byte words of the string's bytes."""
    if pa.types.is_dictionary(array.type):
        encoded = cast(pa.DictionaryArray, array)
        d0, d1 = byte_string_words(encoded.dictionary)
        indices = encoded.indices.fill_null(0).to_numpy(zero_copy_only=False)
        if len(d0) == 0:  # every value is null; the words of nulls are placeholders
            return np.zeros(len(indices), d0.dtype), np.zeros(len(indices), d1.dtype)
        return d0[indices], d1[indices]
    if pa.types.is_string(array.type) or pa.types.is_large_string(array.type):
        kind = STRING
        array = array.cast(pa.large_binary() if pa.types.is_large_string(array.type)
                           else pa.binary())
    else:
        kind = BYTES
        if pa.types.is_fixed_size_binary(array.type):
            array = array.cast(pa.binary())
    if array.null_count:
        array = array.fill_null(b"")
    offsets_type = np.int64 if pa.types.is_large_binary(array.type) else np.int32
    offsets_buffer, data_buffer = array.buffers()[1:3]
    assert offsets_buffer is not None  # a binary array always has its offsets
    offsets = np.frombuffer(memoryview(offsets_buffer), dtype=offsets_type)[
        array.offset:array.offset + len(array) + 1].astype(np.int64)
    data = (np.frombuffer(memoryview(data_buffer), dtype=np.uint8) if data_buffer is not None
            else np.zeros(0, np.uint8))
    lengths = np.diff(offsets)
    word_counts = (lengths + 7) // 8
    word_ends = np.cumsum(word_counts)
    word_starts = word_ends - word_counts
    total_words = int(word_ends[-1]) if len(word_ends) else 0
    # Lay every string out zero-padded to whole 8-byte little-endian words.
    padded = np.zeros(total_words * 8, dtype=np.uint8)
    total_bytes = int(offsets[-1] - offsets[0]) if len(offsets) else 0
    if total_bytes:
        shift = np.repeat(offsets[:-1] - word_starts * 8, lengths)
        padded[np.arange(offsets[0], offsets[-1]) - shift] = data[offsets[0]:offsets[-1]]
    word_values = padded.view("<u8").astype(np.uint64)
    positions = (np.arange(total_words, dtype=np.int64) - np.repeat(word_starts, word_counts)
                 + 1).astype(np.uint64)
    base = field_key(kind, "")
    lanes = []
    for lane in (0, 1):
        terms = mix64(word_values ^ (base[lane] + positions * GOLDEN))
        sums = _segment_sums(terms, word_starts, word_ends)
        lanes.append(mix64((lengths.astype(np.uint64) ^ base[lane]) + sums))
    return lanes[0], lanes[1]


def _collection_words(array: pa.Array, value_type: ValueType) -> tuple[np.ndarray, np.ndarray]:
    """Arrays hash as the multiset of records {index, item}; maps as the multiset {key, value}."""
    offsets = cast(pa.ListArray, array).offsets.to_numpy(zero_copy_only=False).astype(np.int64)
    start, end = int(offsets[0]), int(offsets[-1])
    lengths = np.diff(offsets)
    first: pa.Array
    if value_type.avro == "array":
        first = pa.array(np.arange(end - start, dtype=np.int64) -
                         np.repeat(offsets[:-1] - start, lengths))
        first_type, first_name = ValueType(avro="long"), "index"
        second = cast(pa.ListArray, array).values.slice(start, end - start)
        second_name = "item"
    else:
        entries = cast(pa.MapArray, array)
        first = entries.keys.slice(start, end - start)
        first_type, first_name = ValueType(avro="string"), "key"
        second = entries.items.slice(start, end - start)
        second_name = "value"
    items = value_type.items
    assert items is not None  # an array's or a map's type always names its items
    a0, a1 = contributions(first, first_type, first_name)
    b0, b1 = contributions(second, items, second_name)
    e0, e1 = finish((a0 + b0, a1 + b1), RECORD)
    ends = offsets[1:] - start
    starts = offsets[:-1] - start
    sums = (_segment_sums(e0, starts, ends), _segment_sums(e1, starts, ends))
    return finish(sums, ARRAY if value_type.avro == "array" else MAP)


def _segment_sums(values: np.ndarray, starts: np.ndarray, ends: np.ndarray) -> np.ndarray:
    """Sum (mod 2^64) of values[start:end] for each segment; empty segments sum to 0."""
    running = np.zeros(len(values) + 1, dtype=np.uint64)
    np.cumsum(values, out=running[1:])
    return running[ends] - running[starts]


def _numbers(array: pa.Array, dtype: type) -> np.ndarray:
    if array.null_count:
        array = array.fill_null(0)
    return np.asarray(array.to_numpy(zero_copy_only=False), dtype=dtype)


def _validity(array: pa.Array) -> np.ndarray:
    return pc.is_valid(array).to_numpy(zero_copy_only=False)


def _zero_nulls(lanes: tuple[np.ndarray, np.ndarray],
                array: pa.Array) -> tuple[np.ndarray, np.ndarray]:
    if array.null_count:
        valid = _validity(array)
        return np.where(valid, lanes[0], 0).astype(np.uint64), \
            np.where(valid, lanes[1], 0).astype(np.uint64)
    return lanes


def finish_records(sums0: np.ndarray, sums1: np.ndarray) -> tuple[np.ndarray, np.ndarray, int]:
    """finish(sums, RECORD) and digest_of_lanes of the result, in one compiled pass."""
    k0, k1 = field_key(RECORD, "")
    lane0, lane1, low, high, upper = kernels.finish_records(sums0, sums1, k0, k1)
    digest = ((int(upper) << 64) + int(low) + (int(high) << 32)) % (1 << 128)
    return lane0, lane1, digest


def digest_of_lanes(lane0: np.ndarray, lane1: np.ndarray) -> int:
    """Sum mod 2^128 of the 128-bit hashes lane1 * 2^64 + lane0 (exact, with carries)."""
    mask = np.uint64(0xFFFFFFFF)
    low = int(np.sum(lane0 & mask, dtype=np.uint64)) + \
        (int(np.sum(lane0 >> np.uint64(32), dtype=np.uint64)) << 32)
    high = int(np.sum(lane1, dtype=np.uint64))  # wraps mod 2^64, which is all the high half keeps
    return ((high << 64) + low) % (1 << 128)


def key_lanes(array: pa.Array, value_type: ValueType) -> tuple[np.ndarray, np.ndarray]:
    """Hash of each key value alone, as the one-field record {"": value}."""
    c0, c1 = contributions(array, value_type, KEY_FIELD)
    return finish((c0, c1), RECORD)
