"""Content-addressed bytes kept in the catalogue, cut into pieces of at most CHUNK_SIZE bytes.

A blob row holds a digest (the SHA-256 of the bytes) and a size; its bytes are the rows of
`blob_chunks` in order of `position`, each piece starting at that byte. Every reader and writer
of those bytes is here, so a large document is written and read a piece at a time: on
PostgreSQL one query streams the pieces in binary form (no hex to decode), on SQLite each piece
is read through incremental blob I/O; either way one piece is in memory at a time, and a byte
range reads only the pieces that hold it. Blobs never change, so reading them outside a unit of
work is safe.
"""

from __future__ import annotations

import hashlib
from collections.abc import Iterable, Iterator
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, cast

from sqlalchemy import Engine, insert, select
from sqlalchemy.orm import Session

from registry.errors import NotFound
from registry.store import tables as t

if TYPE_CHECKING:
    import sqlite3

    import psycopg

CHUNK_SIZE = 1024 * 1024
SQLITE_MMAP_BYTES = 1 << 30  # address space, not memory: the kernel pages it in and out

# The pieces holding bytes [start, end): from the last piece starting at or before `start`.
_RANGE_QUERY = (
    "SELECT {columns} FROM blob_chunks WHERE digest = {p} AND position < {p} "
    "AND position >= COALESCE((SELECT max(position) FROM blob_chunks WHERE digest = {p} "
    "AND position <= {p}), 0) ORDER BY position")


def cut(content: bytes, chunk_size: int = CHUNK_SIZE) -> Iterator[tuple[int, bytes]]:
    """(position, piece) for each piece of `content`; an empty blob has no pieces."""
    view = memoryview(content)
    for position in range(0, len(content), chunk_size):
        yield position, bytes(view[position:position + chunk_size])


def chunk_rows(digest: str, content: bytes) -> list[dict[str, Any]]:
    """The `blob_chunks` rows of one blob, for inserting many rows at once (import)."""
    return [{"digest": digest, "position": position, "content": piece}
            for position, piece in cut(content)]


@dataclass(frozen=True)
class StoredPiece:
    """One row of a scan over every blob: a blob with no pieces comes once with `content`
    None."""

    digest: str
    size: int
    position: int | None
    content: bytes | None


class BlobStore:
    """The blobs of one unit of work: they commit with the rows that point at them."""

    def __init__(self, session: Session) -> None:
        self._session = session

    def put(self, content: bytes) -> str:
        digest = hashlib.sha256(content).hexdigest()
        if self._session.get(t.Blob, digest) is None:
            self._session.add(t.Blob(digest=digest, size=len(content)))
            self._session.flush()  # the parent row first, for the pieces' foreign key
            for position, piece in cut(content):
                row = t.BlobChunk(digest=digest, position=position, content=piece)
                self._session.add(row)
                self._session.flush()
                self._session.expunge(row)  # written: let the piece go, never read back
        return digest

    def add_pieces(self, digest: str, content: bytes) -> None:
        """The pieces of a blob whose row is already written (an import inserts every row of
        a table at once, blobs included)."""
        rows = chunk_rows(digest, content)
        if rows:
            self._session.execute(insert(t.BlobChunk), rows)

    def find(self, digest: str) -> bytes | None:
        """A blob's bytes, whole (for the small ones: evidence, predictions), or None."""
        if self._session.get(t.Blob, digest) is None:
            return None
        return b"".join(self._session.execute(
            select(t.BlobChunk.content).where(t.BlobChunk.digest == digest)
            .order_by(t.BlobChunk.position)).scalars())

    def get(self, digest: str) -> bytes:
        content = self.find(digest)
        if content is None:
            raise NotFound(f"no stored content with digest {digest}")
        return content

    def is_referenced(self, digest: str) -> bool:
        """Whether any row points at the blob (a version's document, a dataset's fingerprint,
        an evaluation's predictions)."""
        pointers = (t.Version.stored_blob_digest, t.Dataset.fingerprint_digest,
                    t.Evaluation.predictions_digest)
        return any(self._session.execute(select(column).where(column == digest).limit(1)).first()
                   is not None for column in pointers)

    def remove(self, digest: str) -> None:
        """Drop a blob nothing points at, its pieces first (blobs and their pieces are
        self-certifying, so no row digest covers them; the foreign keys refuse the removal of
        one still in use)."""
        blob = self._session.get(t.Blob, digest)
        if blob is None:
            return
        pieces = self._session.execute(
            select(t.BlobChunk).where(t.BlobChunk.digest == digest)).scalars().all()
        for piece in pieces:
            self._session.delete(piece)
        self._session.flush()
        self._session.delete(blob)
        self._session.flush()

    def scan(self) -> Iterator[StoredPiece]:
        """Every blob's pieces, blob by blob in digest order, streamed (for export and verify)."""
        query = (select(t.Blob.digest, t.Blob.size, t.BlobChunk.position, t.BlobChunk.content)
                 .outerjoin(t.BlobChunk, t.BlobChunk.digest == t.Blob.digest)
                 .order_by(t.Blob.digest, t.BlobChunk.position))
        for row in self._session.execute(query.execution_options(yield_per=8)):
            yield StoredPiece(*row)


def read_range(engine: Engine, digest: str, start: int, end: int) -> Iterator[bytes]:
    """The bytes [start, end) of a stored blob, a piece at a time, never the whole blob."""
    if end <= start:
        return
    if engine.dialect.name == "sqlite":
        yield from _sqlite_range(engine, digest, start, end)
    else:
        yield from _trimmed(_postgresql_pieces(engine, digest, start, end), start, end)


def _trimmed(pieces: Iterable[tuple[int, bytes]], start: int, end: int) -> Iterator[bytes]:
    """Cut the first and last piece down to [start, end); the rest pass through uncopied."""
    for position, piece in pieces:
        low, high = max(start - position, 0), min(end - position, len(piece))
        if low == 0 and high == len(piece):
            yield piece
        elif low < high:
            yield bytes(memoryview(piece)[low:high])


def _sqlite_range(engine: Engine, digest: str, start: int, end: int) -> Iterator[bytes]:
    connection = engine.raw_connection()
    try:
        # The pool hands out the driver's own connection, open until `close` below.
        raw = cast("sqlite3.Connection", connection.dbapi_connection)
        # Read pages straight from a memory map rather than copying each through the page
        # cache: faster for large pieces, and this connection only reads.
        raw.execute(f"PRAGMA mmap_size = {SQLITE_MMAP_BYTES}")
        # Incremental blob I/O copies just the bytes asked for, once; the query stays open
        # meanwhile, so every row id it gave belongs to the snapshot it reads.
        query = _RANGE_QUERY.format(columns="rowid, position", p="?")
        for rowid, position in raw.execute(query, (digest, end, digest, start)):
            with raw.blobopen("blob_chunks", "content", rowid, readonly=True) as piece:
                low = max(start - position, 0)
                high = min(end - position, len(piece))
                if low < high:
                    piece.seek(low)
                    yield piece.read(high - low)
    finally:
        connection.close()


def _postgresql_pieces(engine: Engine, digest: str, start: int, end: int
                       ) -> Iterator[tuple[int, bytes]]:
    connection = engine.raw_connection()
    try:
        raw = cast("psycopg.Connection[Any]", connection.dbapi_connection)
        # One query, its rows streamed as the server sends them; binary results, since bytea
        # in text form comes as hex: twice the bytes and a decode. Leaving early cancels it.
        yield from raw.cursor().stream(_RANGE_QUERY.format(columns="position, content", p="%s"),
                                       (digest, end, digest, start), binary=True)
    finally:
        connection.close()
