"""Canonical JSON bytes for hashing: sorted keys, no insignificant whitespace, UTF-8.

Used for audit events and registration digests, so the same content always hashes the same.
"""

from __future__ import annotations

import hashlib
import json
from typing import Any


def canonical_json(value: Any) -> bytes:
    return json.dumps(value, sort_keys=True, separators=(",", ":"), ensure_ascii=False,
                      allow_nan=False).encode("utf-8")


def sha256_hex(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


def digest_of(value: Any) -> str:
    """SHA-256 (hex) of a JSON-able value's canonical form."""
    return sha256_hex(canonical_json(value))
