"""Digests of the deciding rows: the catalogue tables the audit chain covers, one digest per
column of a row, and reading rows exactly as the database holds them.

Every table is covered except the chain itself (audit events and head), the checkpoints (each
signed) and the blobs (each named by the SHA-256 of its bytes). docs/row-coverage.md says why.
A value is digested as the database returns it, before any type conversion, so a stored value
the mapped type would quietly reinterpret (a 2 in a boolean column, a text in an integer one)
still differs from what was written.
"""

from __future__ import annotations

import functools
import hashlib
from collections.abc import Iterator, Mapping
from concurrent.futures import Future
from datetime import datetime
from typing import Any

from sqlalchemy import Boolean, DateTime, Table, and_, select, type_coerce
from sqlalchemy.orm import Session
from sqlalchemy.types import NullType

from registry.canonical_json import canonical_json
from registry.store import tables as t
from registry.thread_pools import shared_pool
from registry.timestamps import utc_iso

# Tables that vouch for themselves and so carry no row digests in the chain.
SELF_CERTIFYING = frozenset({t.AuditEvent.__tablename__, t.AuditHead.__tablename__,
                             t.Checkpoint.__tablename__, t.Blob.__tablename__,
                             t.BlobChunk.__tablename__})

RowKey = tuple[Any, ...]
ColumnDigests = dict[str, str]


def covered_tables() -> list[Table]:
    """Every covered table, parents before children."""
    return [table for table in t.Base.metadata.sorted_tables
            if table.name not in SELF_CERTIFYING]


def is_covered(table_name: str) -> bool:
    return table_name in t.Base.metadata.tables and table_name not in SELF_CERTIFYING


def key_columns(table: Table) -> list[str]:
    return [column.name for column in table.primary_key.columns]


_DATETIME, _BOOLEAN, _OTHER = "datetime", "boolean", "other"


@functools.cache
def _kinds(table: Table) -> dict[str, str]:
    kinds = {}
    for column in table.columns:
        if isinstance(column.type, DateTime):
            kinds[column.name] = _DATETIME
        elif isinstance(column.type, Boolean):
            kinds[column.name] = _BOOLEAN
        else:
            kinds[column.name] = _OTHER
    return kinds


def plain_value(table: Table, column: str, value: Any) -> Any:
    """A stored value in one form whatever the database or the export it came from."""
    if value is None:
        return None
    kind = _kinds(table)[column]
    if kind is _DATETIME:
        if isinstance(value, datetime):
            return utc_iso(value)
        if isinstance(value, str):  # SQLite keeps timestamps as text
            try:
                return utc_iso(datetime.fromisoformat(value))
            except ValueError:
                return {"unreadable": value}
        return {"unreadable": repr(value)}
    if kind is _BOOLEAN:
        if isinstance(value, bool):
            return value
        if isinstance(value, int) and value in (0, 1):  # SQLite keeps booleans as 0 and 1
            return bool(value)
        return {"unreadable": repr(value)}
    if isinstance(value, (bytes, bytearray, memoryview)):
        return {"bytes": bytes(value).hex()}
    if isinstance(value, float):
        return {"float": repr(value)}
    return value


def encoded_value(value: Any) -> bytes:
    """A plain value as bytes, tagged with its kind so that 1, "1" and true all differ."""
    if isinstance(value, str):
        return b"s:" + value.encode("utf-8", "surrogatepass")
    if isinstance(value, bool):
        return b"b:1" if value else b"b:0"
    if isinstance(value, int):
        return b"i:" + str(value).encode("ascii")
    return b"j:" + canonical_json(value)


@functools.lru_cache(maxsize=4096)
def _prefix(table: str, column: str) -> bytes:
    return f"{table}\x1f{column}\x1f".encode()


def column_digest(table: str, column: str, value: Any) -> str:
    """128 bits of SHA-256 over table, column and tagged value: enough to name the column that
    changed; the row as a whole is bound by row_digest over all of them."""
    return hashlib.sha256(_prefix(table, column) + encoded_value(value)).hexdigest()[:32]


def bytes_digest(table: str, column: str, value: bytes | bytearray | memoryview) -> str:
    """column_digest of a bytes value: SHA-256 over table, column, the tag `x:` and the bytes
    themselves (since revision 0010; before, over the hex text of {"bytes": hex}, which cost
    four times as much for a blob of megabytes: registry/service/digest_conversion.py)."""
    digest = hashlib.sha256(_prefix(table, column) + BYTES_TAG)
    digest.update(value)
    return digest.hexdigest()[:32]


BYTES_TAG = b"x:"


EARLY_DIGEST_BYTES = 1 << 20  # bytes values from this size on are digested as they are added
_EARLY_WORKERS = 2


class EarlyDigests:
    """Digests of the large bytes values a transaction adds, taken on threads from the moment
    they are added (SHA-256 lets go of the GIL) while the transaction goes on, so that a
    transaction writing megabytes (the compact rows of a served batch) does not wait for them
    when it seals. Sealing still digests what the database holds: a value read back takes a
    digest taken early only when it is the very same bytes, compared in full."""

    def __init__(self) -> None:
        self._taken: dict[tuple[str, str], list[tuple[bytes, Future[str]]]] = {}

    def start(self, table: str, column: str, value: bytes) -> None:
        future = shared_pool("row-digest", _EARLY_WORKERS).submit(
            bytes_digest, table, column, value)
        self._taken.setdefault((table, column), []).append((value, future))

    def digest(self, table: str, column: str, stored: bytes | bytearray | memoryview) -> str:
        """bytes_digest of a value as read back."""
        for value, future in self._taken.get((table, column), ()):
            if len(value) == len(stored) and value == stored:
                return future.result()
        return bytes_digest(table, column, stored)

    def discard(self) -> None:
        self._taken.clear()


def column_digests(table: Table, row: Mapping[str, Any],
                   early: EarlyDigests | None = None) -> ColumnDigests:
    """The digest of every column that is not NULL. Leaving NULLs out means a nullable column
    added by a later revision leaves the rows written before it as they were recorded."""
    digests = {}
    name = table.name
    kinds = _kinds(table)
    for column in kinds:
        value = row[column]
        if value is None:
            continue
        if kinds[column] is _OTHER and isinstance(value, (bytes, bytearray, memoryview)):
            digests[column] = (early.digest(name, column, value) if early is not None
                               else bytes_digest(name, column, value))
        else:
            digests[column] = column_digest(name, column, plain_value(table, column, value))
    return digests


def row_digest(digests: Mapping[str, str]) -> str:
    """SHA-256 over `column=digest` lines in column-name order."""
    lines = "\n".join(f"{column}={digests[column]}" for column in sorted(digests))
    return hashlib.sha256(lines.encode("utf-8")).hexdigest()


def key_of(table: Table, row: Mapping[str, Any]) -> RowKey:
    return tuple(plain_value(table, name, row[name]) for name in key_columns(table))


def _raw_columns(table: Table) -> list[Any]:
    # NullType: no result processing, so what the driver returns is what is digested.
    return [type_coerce(column, NullType()).label(column.name) for column in table.columns]


def read_row(session: Session, table: Table, key: Mapping[str, Any]) -> dict[str, Any] | None:
    """One row as stored, by primary key; None when it is not there."""
    condition = and_(*(table.c[name] == value for name, value in key.items()))
    row = session.execute(select(*_raw_columns(table)).where(condition)).first()
    return dict(row._mapping) if row is not None else None


def scan(session: Session, table: Table) -> Iterator[dict[str, Any]]:
    """Every row of a table as stored, ordered by primary key."""
    query = select(*_raw_columns(table)).order_by(*table.primary_key.columns)
    for row in session.execute(query.execution_options(yield_per=2000)):
        yield dict(row._mapping)


class RowReader:
    """The covered rows as stored, for `audit verify` (hung on the unit of work as `rows`)."""

    def __init__(self, session: Session) -> None:
        self._session = session

    def scan(self, table: Table) -> Iterator[dict[str, Any]]:
        return scan(self._session, table)

    def read(self, table: Table, key: Mapping[str, Any]) -> dict[str, Any] | None:
        return read_row(self._session, table, key)
