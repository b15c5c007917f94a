"""Blobs stored in pieces: every size around a piece's edge, byte ranges across edges, the
revision that cuts up older blobs, and `audit verify` finding a piece out of place.

The outside reference for every byte range is Python's own slicing of the original bytes, and
for every digest the standard library's SHA-256 (FIPS 180-4)."""

from __future__ import annotations

import hashlib
import random

import pytest
from sqlalchemy import text

from registry.service.integrity import verify_catalogue
from registry.store import migrate
from registry.store.blob_store import CHUNK_SIZE, read_range
from registry.store.catalogue import open_catalogue
from registry.store.unit_of_work import UnitOfWork

MiB = CHUNK_SIZE
EDGE_SIZES = [0, 1, MiB - 1, MiB, MiB + 1, 2 * MiB, 3 * MiB - 1]


def _content(size: int, seed: int = 0) -> bytes:
    return random.Random(seed).randbytes(size)


def _put(catalogue, content: bytes) -> str:
    with UnitOfWork(catalogue) as uow:
        digest = uow.blobs.put(content)
        uow.commit()
    return digest


def _pieces(catalogue, digest: str) -> list[tuple[int, int]]:
    with catalogue.engine.connect() as connection:
        return [tuple(row) for row in connection.execute(text(
            "SELECT position, length(content) FROM blob_chunks WHERE digest = :d "
            "ORDER BY position"), {"d": digest})]


def test_each_size_around_a_piece_edge_is_stored_and_read_back_exactly(catalogue):
    for size in EDGE_SIZES:
        content = _content(size, seed=size)
        digest = _put(catalogue, content)
        assert digest == hashlib.sha256(content).hexdigest()
        # Pieces of at most a MiB, each starting where the one before it ended; none when empty.
        expected = [(p, min(MiB, size - p)) for p in range(0, size, MiB)]
        assert _pieces(catalogue, digest) == expected, size
        assert b"".join(read_range(catalogue.engine, digest, 0, size)) == content, size
        with UnitOfWork(catalogue, write=False) as uow:
            assert uow.blobs.get(digest) == content, size
    assert verify_catalogue(catalogue).ok


def test_storing_the_same_bytes_twice_keeps_one_copy(catalogue):
    content = _content(MiB + 7)
    assert _put(catalogue, content) == _put(catalogue, content)
    assert len(_pieces(catalogue, hashlib.sha256(content).hexdigest())) == 2


def test_byte_ranges_across_piece_edges_match_slicing_the_original(catalogue):
    size = 3 * MiB + 5
    content = _content(size, seed=3)
    digest = _put(catalogue, content)
    edges = [0, 1, MiB - 1, MiB, MiB + 1, 2 * MiB - 1, 2 * MiB, 3 * MiB, size - 1, size]
    spans = [(a, b) for a in edges for b in edges if a < b]
    rng = random.Random(16)
    spans += [tuple(sorted(rng.sample(range(size + 1), 2))) for _ in range(20)]
    for start, end in spans:
        pieces = list(read_range(catalogue.engine, digest, start, end))
        assert b"".join(pieces) == content[start:end], (start, end)
        assert all(0 < len(piece) <= MiB for piece in pieces), (start, end)
    assert list(read_range(catalogue.engine, digest, 5, 5)) == []


def test_reading_stops_cleanly_when_the_reader_leaves_early(catalogue):
    content = _content(4 * MiB, seed=4)
    digest = _put(catalogue, content)
    pieces = read_range(catalogue.engine, digest, 0, len(content))
    assert next(pieces) == content[:MiB]
    pieces.close()  # a client that hung up: the query is given up and the connection returned
    assert b"".join(read_range(catalogue.engine, digest, MiB, 2 * MiB)) == content[MiB:2 * MiB]


def _edit(catalogue, statement: str, **values) -> None:
    with catalogue.engine.begin() as connection:
        connection.execute(text(statement), values)


def _blob_findings(catalogue) -> list[tuple[str, str | None, str | None]]:
    report = verify_catalogue(catalogue)
    return [(f.place, f.table, f.column) for f in report.findings]


def test_verify_names_a_missing_piece_and_a_piece_out_of_place(catalogue):
    content = _content(2 * MiB + 3, seed=5)
    digest = _put(catalogue, content)
    _edit(catalogue, "DELETE FROM blob_chunks WHERE digest = :d AND position = :p",
          d=digest, p=MiB)
    assert _blob_findings(catalogue) == [(f"blob {digest}", "blobs", "content")]
    _edit(catalogue, "INSERT INTO blob_chunks (digest, position, content) VALUES (:d, :p, :c)",
          d=digest, p=MiB, c=content[MiB:2 * MiB])
    assert verify_catalogue(catalogue).ok
    # The same bytes in the same order, but the last piece claims to start a byte later: a
    # byte range would read the wrong bytes, though the whole still gives the digest.
    _edit(catalogue, "UPDATE blob_chunks SET position = :n WHERE digest = :d AND position = :p",
          d=digest, p=2 * MiB, n=2 * MiB + 1)
    assert _blob_findings(catalogue) == [(f"blob {digest}", "blob_chunks", "position")]


def _insert_old_blob(connection, content: bytes) -> str:
    digest = hashlib.sha256(content).hexdigest()
    connection.execute(text("INSERT INTO blobs (digest, size, content) VALUES (:d, :s, :c)"),
                       {"d": digest, "s": len(content), "c": content})
    return digest


def test_the_revision_cuts_up_existing_blobs_and_the_downgrade_joins_them(empty_catalogue_url):
    catalogue = open_catalogue(empty_catalogue_url, must_exist=False)
    contents = [_content(size, seed=size) for size in (0, 5, MiB, 2 * MiB + 1)]
    try:
        migrate.upgrade(catalogue, "0007")
        with catalogue.engine.begin() as connection:
            digests = [_insert_old_blob(connection, content) for content in contents]
        migrate.upgrade(catalogue, "0008")
        for digest, content in zip(digests, contents, strict=True):
            assert [p for p, _ in _pieces(catalogue, digest)] == \
                list(range(0, len(content), MiB))
            assert b"".join(read_range(catalogue.engine, digest, 0, len(content))) == content
        migrate.downgrade(catalogue, "0007")
        with catalogue.engine.connect() as connection:
            stored = dict(connection.execute(text("SELECT digest, content FROM blobs")).all())
        assert {d: bytes(c) for d, c in stored.items()} == dict(zip(digests, contents,
                                                                   strict=True))
    finally:
        catalogue.close()


@pytest.mark.parametrize("size", [0, MiB + 1])
def test_export_and_import_keep_a_blob_of_any_size(cli, tmp_path, catalogue, size):
    from registry.service.backup import export_catalogue, import_catalogue, read_export

    content = _content(size, seed=7)
    digest = _put(catalogue, content)
    folder = tmp_path / "export"
    revision = migrate.current_revision(catalogue)
    export_catalogue(catalogue, folder, revision)
    assert (folder / "blobs" / digest).read_bytes() == content
    target = open_catalogue(f"sqlite:///{tmp_path / 'copy.db'}", must_exist=False)
    try:
        migrate.upgrade(target)
        import_catalogue(target, read_export(folder, revision))
        assert _pieces(target, digest) == _pieces(catalogue, digest)
        assert b"".join(read_range(target.engine, digest, 0, size)) == content
        assert verify_catalogue(target).ok
    finally:
        target.close()
