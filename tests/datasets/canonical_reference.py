"""The canonical value hash of docs/canonical-values.md, one value at a time in plain Python.

Written from the document, not from registry/datasets/hashing.py, so the two can check each other.
"""

from __future__ import annotations

import hashlib
import math
import struct

MASK = (1 << 64) - 1
PHI = 0x9E3779B97F4A7C15
NULL, BOOLEAN, INTEGER, FLOAT, STRING, BYTES, RECORD, ARRAY, MAP = range(9)


def mix64(x: int) -> int:
    x ^= x >> 30
    x = (x * 0xBF58476D1CE4E5B9) & MASK
    x ^= x >> 27
    x = (x * 0x94D049BB133111EB) & MASK
    x ^= x >> 31
    return x


def key(kind: int, name: str) -> tuple[int, int]:
    digest = hashlib.blake2b(bytes([kind]) + name.encode(), digest_size=16,
                             key=b"lockkeeper/canonical-values/v1").digest()
    return int.from_bytes(digest[:8], "little"), int.from_bytes(digest[8:], "little")


def kind_of(avro: object, value: object) -> int:
    if value is None:
        return NULL
    name = avro if isinstance(avro, str) else avro["type"]
    return {"boolean": BOOLEAN, "int": INTEGER, "long": INTEGER, "float": FLOAT,
            "double": FLOAT, "string": STRING, "enum": STRING, "bytes": BYTES, "fixed": BYTES,
            "record": RECORD, "array": ARRAY, "map": MAP}[name]


def branch_for(avro: object, value: object) -> object:
    """The branch of a union that a value belongs to: its kind decides (null for None)."""
    if not isinstance(avro, list):
        return avro
    for branch in avro:
        if branch == "null":
            if value is None:
                return branch
            continue
        name = branch if isinstance(branch, str) else branch["type"]
        if value is None:
            continue
        if isinstance(value, bool):
            fits = name == "boolean"
        elif isinstance(value, int):
            fits = name in ("int", "long")
        elif isinstance(value, float):
            fits = name in ("float", "double")
        elif isinstance(value, str):
            fits = name == "string" or (name == "enum" and value in branch["symbols"])
        elif isinstance(value, bytes):
            fits = name in ("bytes", "fixed")
        elif isinstance(value, dict):
            fits = name == "map" or (name == "record" and
                                     set(value) == {f["name"] for f in branch["fields"]})
        else:
            fits = name == "array"
        if fits:
            return branch
    raise ValueError(f"{value!r} fits no branch of {avro}")


def one_word(kind: int, value: object) -> int:
    if kind == NULL:
        return 0
    if kind == BOOLEAN:
        return int(bool(value))
    if kind == INTEGER:
        return int(value) & MASK
    number = float(value)
    if math.isnan(number):
        return 0x7FF8000000000000
    if number == 0.0:
        return 0
    return struct.unpack("<Q", struct.pack("<d", number))[0]


def byte_words(kind: int, data: bytes) -> tuple[int, int]:
    base = key(kind, "")
    padded = data + b"\0" * (-len(data) % 8)
    result = []
    for lane in (0, 1):
        total = 0
        for i in range(len(padded) // 8):
            word = int.from_bytes(padded[8 * i:8 * i + 8], "little")
            total += mix64(word ^ ((base[lane] + (i + 1) * PHI) & MASK))
        result.append(mix64(((len(data) ^ base[lane]) + total) & MASK))
    return result[0], result[1]


def contribution(name: str, avro: object, value: object) -> tuple[int, int]:
    avro = branch_for(avro, value)
    kind = kind_of(avro, value)
    k0, k1 = key(kind, name)
    if kind in (NULL, BOOLEAN, INTEGER, FLOAT):
        x = mix64(one_word(kind, value) ^ k0)
        return x, (x * (k1 | 1)) & MASK
    w0, w1 = two_words(kind, avro, value)
    return mix64(w0 ^ k0), mix64(w1 ^ k1)


def finish(sums: tuple[int, int], kind: int) -> tuple[int, int]:
    k0, k1 = key(kind, "")
    return mix64((sums[0] & MASK) ^ k0), mix64((sums[1] & MASK) ^ k1)


def pair_record(first: tuple[str, object, object], second: tuple[str, object, object]):
    a, b = contribution(*first), contribution(*second)
    return finish((a[0] + b[0], a[1] + b[1]), RECORD)


def two_words(kind: int, avro: object, value: object) -> tuple[int, int]:
    if kind == STRING:
        return byte_words(STRING, value.encode("utf-8"))
    if kind == BYTES:
        return byte_words(BYTES, bytes(value))
    if kind == RECORD:
        return record_words(avro["fields"], value)
    if kind == ARRAY:
        sums = [0, 0]
        for index, item in enumerate(value):
            e = pair_record(("index", "long", index), ("item", avro["items"], item))
            sums = [sums[0] + e[0], sums[1] + e[1]]
        return finish((sums[0], sums[1]), ARRAY)
    sums = [0, 0]
    for map_key, item in value.items():
        e = pair_record(("key", "string", map_key), ("value", avro["values"], item))
        sums = [sums[0] + e[0], sums[1] + e[1]]
    return finish((sums[0], sums[1]), MAP)


def record_words(fields: list[dict], record: dict) -> tuple[int, int]:
    sums = [0, 0]
    for field in fields:
        c = contribution(field["name"], field["type"], record[field["name"]])
        sums = [sums[0] + c[0], sums[1] + c[1]]
    return finish((sums[0], sums[1]), RECORD)


def record_hash(schema: dict, record: dict) -> int:
    w0, w1 = record_words(schema["fields"], record)
    return (w1 << 64) | w0


def content_digest(schema: dict, records: list[dict]) -> str:
    return f"{sum(record_hash(schema, r) for r in records) % (1 << 128):032x}"


def key_digest(avro: object, values: list) -> str:
    total = 0
    for value in values:
        w0, w1 = record_words([{"name": "", "type": avro}], {"": value})
        total += (w1 << 64) | w0
    return f"{total % (1 << 128):032x}"
