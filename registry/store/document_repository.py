"""Stored documents: which blob holds a version's document, and reading a blob in chunks.

A document may be larger than memory, so its bytes are read a chunk at a time: SQLite through
its incremental blob I/O (sqlite3.Connection.blobopen), PostgreSQL by `substring` of the bytea
column, one chunk per query. Blobs are content-addressed and never change, so chunks read by
separate queries always belong to the same bytes.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, cast

from sqlalchemy import Engine, select
from sqlalchemy.orm import Session

from registry.store import tables as t

if TYPE_CHECKING:
    import sqlite3

    import psycopg

CHUNK_SIZE = 1024 * 1024
SQLITE_MMAP_BYTES = 1 << 30  # address space, not memory: the kernel pages it in and out


@dataclass(frozen=True)
class DocumentRef:
    """Where a version's document is: its blob (the SHA-256 of the bytes as registered)."""

    model: str
    version: int
    blob_digest: str
    size: int
    kind: str


class DocumentRepository:
    def __init__(self, session: Session) -> None:
        self._session = session

    def _query(self):
        return (select(t.Model.name, t.Version.number, t.Version.stored_blob_digest,
                       t.Blob.size, t.Version.document_kind)
                .join(t.Version, t.Version.model_id == t.Model.id)
                .join(t.Blob, t.Blob.digest == t.Version.stored_blob_digest))

    def of_version(self, model_name: str, number: int) -> DocumentRef | None:
        row = self._session.execute(self._query().where(
            t.Model.name == model_name, t.Version.number == number)).first()
        return None if row is None else DocumentRef(*row)

    def of_stage(self, model_name: str, stage: str) -> DocumentRef | None:
        """The document of the newest holder of the stage (the one the stage lookup names)."""
        row = self._session.execute(
            self._query().join(t.StageHolding, t.StageHolding.version_id == t.Version.id)
            .where(t.Model.name == model_name, t.StageHolding.stage == stage)
            .order_by(t.StageHolding.since.desc(), t.StageHolding.id.desc()).limit(1)).first()
        return None if row is None else DocumentRef(*row)


def read_blob_chunks(engine: Engine, digest: str, start: int, end: int,
                     chunk_size: int = CHUNK_SIZE) -> Iterator[bytes]:
    """The bytes [start, end) of a stored blob, `chunk_size` at a time, without ever holding
    the whole blob in memory."""
    if end <= start:
        return
    if engine.dialect.name == "sqlite":
        yield from _sqlite_chunks(engine, digest, start, end, chunk_size)
    else:
        yield from _substring_chunks(engine, digest, start, end, chunk_size)


def _sqlite_chunks(engine: Engine, digest: str, start: int, end: int,
                   chunk_size: int) -> Iterator[bytes]:
    connection = engine.raw_connection()
    try:
        # The pool hands out the driver's own connection, open until `close` below.
        raw = cast("sqlite3.Connection", connection.dbapi_connection)
        # Read pages straight from a memory map rather than copying each through the page
        # cache: several times faster for a large blob, and this connection only reads.
        raw.execute(f"PRAGMA mmap_size = {SQLITE_MMAP_BYTES}")
        row = raw.execute("SELECT rowid FROM blobs WHERE digest = ?", (digest,)).fetchone()
        if row is None:
            return
        with raw.blobopen("blobs", "content", row[0], readonly=True) as blob:
            blob.seek(start)
            position = start
            while position < end:
                chunk = blob.read(min(chunk_size, end - position))
                if not chunk:
                    return
                position += len(chunk)
                yield chunk
    finally:
        connection.close()


def _substring_chunks(engine: Engine, digest: str, start: int, end: int,
                      chunk_size: int) -> Iterator[bytes]:
    # Binary results: bytea in text format comes as hex, twice the bytes and a decode.
    query = "SELECT substring(content FROM %s FOR %s) FROM blobs WHERE digest = %s"
    connection = engine.raw_connection()
    try:
        raw = cast("psycopg.Connection[Any]", connection.dbapi_connection)
        cursor = raw.cursor(binary=True)
        position = start
        while position < end:
            length = min(chunk_size, end - position)
            row = cursor.execute(query, (position + 1, length, digest)).fetchone()
            if row is None or not row[0]:
                return
            chunk = bytes(row[0])
            position += len(chunk)
            yield chunk
    finally:
        connection.close()
