"""The server's checked copies of large documents (registry/service/document_cache.py): a copy is
made only of bytes whose SHA-256 is the digest, served only after this process hashed it, and
anything odd (changed bytes, a foreign folder, a full disk, a client gone mid-way) falls back to
the catalogue with the client seeing no difference. SHA-256 is hashlib's (FIPS 180-4)
throughout; byte ranges are checked against Python's slicing of the registered bytes."""

from __future__ import annotations

import hashlib
import os
import random
from pathlib import Path

import pytest

from registry.service.document_cache import DocumentCache, default_folder, folder_setting
from registry.store.blob_store import CHUNK_SIZE

from tests.api.api_helpers import make_api, set_up_model
from tests.conftest import run_cli

DOCUMENT = "/models/m/versions/1/document"


def _sha(content: bytes) -> str:
    return hashlib.sha256(content).hexdigest()


@pytest.fixture
def large() -> bytes:
    return random.Random(2026).randbytes(2 * CHUNK_SIZE + 17)


def _serving(cli, tmp_path: Path, content: bytes, **settings):
    folder = tmp_path / "copies"
    api = make_api(cli, config={"LOCKKEEPER_DOCUMENT_CACHE": str(folder), **settings})
    set_up_model(api, tmp_path)
    response = api.register("m", tmp_path, tag="v1", document=content)
    assert response.status_code == 201, response.data
    return api, folder


def _catalogue_unread(monkeypatch) -> None:
    """From here on, reading document bytes out of the catalogue fails the test."""
    def refuse(*args, **kwargs):
        raise AssertionError("the bytes were read from the catalogue")

    monkeypatch.setattr("registry.api.routes.documents.document_chunks", refuse)


def test_a_whole_fetch_keeps_a_copy_and_later_fetches_come_from_it(cli, tmp_path, large,
                                                                    monkeypatch):
    api, folder = _serving(cli, tmp_path, large)
    first = api.get(DOCUMENT)
    assert first.status_code == 200 and first.data == large
    copy = folder / _sha(large)
    assert copy.read_bytes() == large
    assert [p.name for p in folder.iterdir()] == [copy.name]  # no temporary file left
    assert folder.stat().st_mode & 0o777 == 0o700
    _catalogue_unread(monkeypatch)
    again = api.get(DOCUMENT)
    assert again.status_code == 200 and again.data == large
    assert again.headers["ETag"] == f'"{_sha(large)}"'
    assert again.headers["Content-Length"] == str(len(large))
    # RFC 9110 section 14.1.2 ranges (inclusive last byte) served from the copy.
    for first_byte, last_byte in [(0, 0), (CHUNK_SIZE - 1, CHUNK_SIZE + 1),
                                  (len(large) - 5, len(large) - 1), (7, 2 * CHUNK_SIZE + 3)]:
        part = api.get(DOCUMENT, headers={"Range": f"bytes={first_byte}-{last_byte}"})
        assert part.status_code == 206
        assert part.data == large[first_byte:last_byte + 1]


def test_a_range_alone_makes_no_copy_and_a_small_document_never_gets_one(cli, tmp_path, large):
    api, folder = _serving(cli, tmp_path, large)
    part = api.get(DOCUMENT, headers={"Range": "bytes=10-99"})
    assert part.status_code == 206 and part.data == large[10:100]
    assert not (folder / _sha(large)).exists()
    small = b"x" * CHUNK_SIZE  # one stored piece: as quick to read from the catalogue
    assert api.register("m", tmp_path, tag="v2", document=small).status_code == 201
    assert api.get("/models/m/versions/2/document").data == small
    assert not (folder / _sha(small)).exists()


def test_a_copy_whose_bytes_changed_is_removed_and_the_catalogue_serves(cli, tmp_path, large):
    api, folder = _serving(cli, tmp_path, large)
    assert api.get(DOCUMENT).data == large
    copy = folder / _sha(large)
    altered = bytearray(large)
    altered[CHUNK_SIZE] ^= 1
    copy.write_bytes(bytes(altered))  # same size, new modification time
    response = api.get(DOCUMENT)
    assert response.data == large
    # The altered file went; the whole fetch above filled a fresh copy from the catalogue.
    assert copy.read_bytes() == large


def test_a_new_process_hashes_a_copy_it_did_not_write_before_trusting_it(cli, tmp_path, large):
    api, folder = _serving(cli, tmp_path, large)
    assert api.get(DOCUMENT).data == large
    copy = folder / _sha(large)
    status = copy.stat()
    altered = bytearray(large)
    altered[-1] ^= 0xFF
    with copy.open("r+b") as handle:  # the same inode, size and modification time
        handle.write(bytes(altered))
    os.utime(copy, ns=(status.st_atime_ns, status.st_mtime_ns))
    restarted = make_api(cli, config={"LOCKKEEPER_DOCUMENT_CACHE": str(folder)})
    response = restarted.get(DOCUMENT)
    assert response.status_code == 200 and response.data == large


def test_a_folder_others_may_write_to_is_not_used(cli, tmp_path, large):
    folder = tmp_path / "shared"
    folder.mkdir(mode=0o777)
    folder.chmod(0o777)
    api, _ = _serving(cli, tmp_path, large, LOCKKEEPER_DOCUMENT_CACHE=str(folder))
    assert api.get(DOCUMENT).data == large
    assert list(folder.iterdir()) == []


def test_a_cache_folder_that_cannot_be_made_steps_aside(cli, tmp_path, large):
    blocker = tmp_path / "a-file"
    blocker.write_bytes(b"")
    api, _ = _serving(cli, tmp_path, large, LOCKKEEPER_DOCUMENT_CACHE=str(blocker / "copies"))
    assert api.get(DOCUMENT).data == large
    assert api.get(DOCUMENT).data == large


# The cache on its own, fed chunks directly.

def _chunks(content: bytes, size: int = 1000):
    return (content[i:i + size] for i in range(0, len(content), size))


def _cache(folder: Path, **limits) -> DocumentCache:
    return DocumentCache(folder, **{"min_bytes": 1, **limits})


def test_bytes_that_do_not_match_the_digest_are_passed_on_but_not_kept(tmp_path):
    cache = _cache(tmp_path / "c")
    content = b"abc" * 1000
    wrong = _sha(b"something else")
    assert b"".join(cache.filling(wrong, len(content), _chunks(content))) == content
    assert cache.open(wrong, len(content)) is None
    assert list((tmp_path / "c").iterdir()) == []
    short = b"".join(cache.filling(_sha(content), len(content) + 1, _chunks(content)))
    assert short == content and list((tmp_path / "c").iterdir()) == []


def test_a_client_gone_mid_way_leaves_no_copy_and_no_temporary_file(tmp_path):
    cache = _cache(tmp_path / "c")
    content = bytes(range(256)) * 100
    stream = cache.filling(_sha(content), len(content), _chunks(content))
    next(stream)
    stream.close()
    assert list((tmp_path / "c").iterdir()) == []


def test_a_disk_that_refuses_writes_still_passes_every_byte_on(tmp_path, monkeypatch):
    cache = _cache(tmp_path / "c")
    content = bytes(range(256)) * 100

    def full(*args, **kwargs):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr("registry.service.document_cache.tempfile.mkstemp", full)
    assert b"".join(cache.filling(_sha(content), len(content), _chunks(content))) == content
    monkeypatch.undo()
    folder = tmp_path / "c"
    stream = cache.filling(_sha(content), len(content), _chunks(content))
    first = next(stream)
    for entry in folder.iterdir():  # the temporary file vanishes under the writer
        entry.unlink()
    rest = b"".join(stream)
    assert first + rest == content
    assert cache.open(_sha(content), len(content)) is None


def test_two_processes_share_a_folder_and_the_second_hashes_before_trusting(tmp_path,
                                                                            monkeypatch):
    folder = tmp_path / "c"
    content = b"shared bytes" * 500
    writer, reader = _cache(folder), _cache(folder)
    assert b"".join(writer.filling(_sha(content), len(content), _chunks(content))) == content
    hashed = []
    real = hashlib.file_digest
    monkeypatch.setattr("registry.service.document_cache.hashlib.file_digest",
                        lambda *a: hashed.append(1) or real(*a))
    with writer.open(_sha(content), len(content)) as handle:  # the writer hashed it already
        assert handle.read() == content
    assert hashed == []
    for _ in range(2):
        with reader.open(_sha(content), len(content)) as handle:
            assert handle.read() == content
    assert hashed == [1]  # once, on first use


def test_the_least_recently_served_copies_go_beyond_the_size_limit(tmp_path):
    folder = tmp_path / "c"
    cache = _cache(folder, max_bytes=2500)
    contents = [bytes([n]) * 1000 for n in range(3)]
    for number, content in enumerate(contents[:2]):
        b"".join(cache.filling(_sha(content), len(content), _chunks(content)))
        os.utime(folder / _sha(content), (1_000_000 + number, 1_000_000 + number))
    cache.open(_sha(contents[0]), 1000).close()  # served now: the most recent
    b"".join(cache.filling(_sha(contents[2]), 1000, _chunks(contents[2])))
    assert sorted(p.name for p in folder.iterdir()) == sorted(
        [_sha(contents[0]), _sha(contents[2])])
    too_big = b"z" * 3000
    b"".join(cache.filling(_sha(too_big), len(too_big), _chunks(too_big)))
    assert not (folder / _sha(too_big)).exists()


def test_temporary_files_of_a_dead_process_are_cleared(tmp_path):
    folder = tmp_path / "c"
    cache = _cache(folder)
    stale = folder / ".filling-dead"
    stale.write_bytes(b"half")
    os.utime(stale, (0, 0))
    fresh = folder / ".filling-alive"
    fresh.write_bytes(b"half")
    cache.evict()
    assert not stale.exists() and fresh.exists()


def test_the_folder_setting_defaults_to_the_users_cache_folder(monkeypatch, tmp_path):
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path))
    assert default_folder() == tmp_path / "lockkeeper" / "documents"
    assert folder_setting(None) == str(tmp_path / "lockkeeper" / "documents")
    assert folder_setting("off") == "" and folder_setting("OFF ") == ""
    assert folder_setting("/srv/copies") == "/srv/copies"


@pytest.mark.parametrize("limit", ["0", "x"])
def test_a_bad_cache_limit_for_serve_exits_2(tmp_path, limit):
    result = run_cli(["--db", f"sqlite:///{tmp_path / 'c.db'}", "serve",
                      "--document-cache-mib", limit])
    assert result.exit_code == 2
