"""Schema fingerprints: CRC-64-AVRO and SHA-256 of the Parsing Canonical Form.

Avro specification, Schema Fingerprints. The 64-bit fingerprint is written as the hex of its
eight bytes in little-endian order, the order of the single-object encoding and of fastavro.
"""

from __future__ import annotations

import hashlib
from dataclasses import dataclass

from registry.schema.model import Schema
from registry.schema.serialise import canonical_form

# Avro specification, Schema Fingerprints: EMPTY is the fingerprint of the empty string.
CRC64_EMPTY = 0xC15D213AA4D7A795


def _crc64_table() -> tuple[int, ...]:
    table = []
    for byte in range(256):
        value = byte
        for _ in range(8):
            value = (value >> 1) ^ (CRC64_EMPTY & -(value & 1))
        table.append(value)
    return tuple(table)


_TABLE = _crc64_table()


def crc64_avro(data: bytes) -> int:
    """The 64-bit Rabin fingerprint the specification calls CRC-64-AVRO."""
    value = CRC64_EMPTY
    table = _TABLE
    for byte in data:
        value = (value >> 8) ^ table[(value ^ byte) & 0xFF]
    return value


@dataclass(frozen=True)
class Fingerprint:
    canonical_form: str
    crc64_avro: str  # 16 hex digits, little-endian byte order
    sha256: str  # 64 hex digits


def fingerprint(schema: Schema) -> Fingerprint:
    """Canonical form of `schema` with its CRC-64-AVRO and SHA-256 fingerprints."""
    form = canonical_form(schema)
    data = form.encode("utf-8")
    return Fingerprint(canonical_form=form,
                       crc64_avro=crc64_avro(data).to_bytes(8, "little").hex(),
                       sha256=hashlib.sha256(data).hexdigest())
