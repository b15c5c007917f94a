"""Fetching documents over HTTP: exact bytes, ETag, 304, byte ranges, and bad input."""

from __future__ import annotations

import hashlib
import random
import tracemalloc

from tests.api.api_helpers import problem, set_up_model


def _registered(api, tmp_path, document: bytes = b"model-bytes-v1", tag: str = "v1") -> None:
    response = api.register("m", tmp_path, tag=tag, document=document)
    assert response.status_code == 201, response.data


def test_a_versions_document_is_served_byte_for_byte_with_its_sha256_as_etag(api, tmp_path):
    set_up_model(api, tmp_path)
    _registered(api, tmp_path, b"\x00\x01 exact bytes \xff")
    response = api.get("/models/m/versions/1/document")
    assert response.status_code == 200
    assert response.data == b"\x00\x01 exact bytes \xff"
    assert response.headers["ETag"] == f'"{hashlib.sha256(response.data).hexdigest()}"'
    assert response.mimetype == "application/octet-stream"  # an artifact, not PFA
    assert response.headers["Accept-Ranges"] == "bytes"
    assert response.headers["Content-Length"] == str(len(response.data))


def test_if_none_match_with_the_documents_digest_gives_304(api, tmp_path):
    set_up_model(api, tmp_path)
    _registered(api, tmp_path)
    etag = api.get("/models/m/versions/1/document").headers["ETag"]
    again = api.get("/models/m/versions/1/document", headers={"If-None-Match": etag})
    assert again.status_code == 304 and again.data == b""
    other = api.get("/models/m/versions/1/document", headers={"If-None-Match": '"abc"'})
    assert other.status_code == 200


def test_byte_ranges_follow_rfc_9110(api, tmp_path):
    set_up_model(api, tmp_path)
    content = bytes(range(256)) * 4
    _registered(api, tmp_path, content)
    path = "/models/m/versions/1/document"
    # RFC 9110 section 14.1.2: bytes=first-last, inclusive; a suffix range counts from the end.
    part = api.get(path, headers={"Range": "bytes=10-19"})
    assert part.status_code == 206 and part.data == content[10:20]
    assert part.headers["Content-Range"] == f"bytes 10-19/{len(content)}"
    suffix = api.get(path, headers={"Range": "bytes=-5"})
    assert suffix.status_code == 206 and suffix.data == content[-5:]
    open_ended = api.get(path, headers={"Range": "bytes=1000-"})
    assert open_ended.data == content[1000:]
    # Section 15.5.17: a range wholly outside the representation is 416 with bytes */length.
    outside = api.get(path, headers={"Range": "bytes=5000-6000"})
    assert outside.status_code == 416
    assert outside.headers["Content-Range"] == f"bytes */{len(content)}"
    # Section 13.1.5: an If-Range that does not match means the whole representation.
    stale = api.get(path, headers={"Range": "bytes=0-9", "If-Range": '"old"'})
    assert stale.status_code == 200 and stale.data == content
    etag = part.headers["ETag"]
    fresh = api.get(path, headers={"Range": "bytes=0-9", "If-Range": etag})
    assert fresh.status_code == 206 and fresh.data == content[:10]
    # Several ranges may be answered with the whole representation (section 14.2).
    several = api.get(path, headers={"Range": "bytes=0-1,5-6"})
    assert several.status_code == 200 and several.data == content


def test_ranges_across_the_stored_pieces_edges_give_the_bytes_asked_for(api, tmp_path):
    from registry.store.blob_store import CHUNK_SIZE

    set_up_model(api, tmp_path)
    content = random.Random(16).randbytes(2 * CHUNK_SIZE + 3)
    _registered(api, tmp_path, content)
    path = "/models/m/versions/1/document"
    whole = api.get(path)
    # The ETag is the SHA-256 of the bytes as registered (FIPS 180-4 through hashlib).
    assert whole.data == content
    assert whole.headers["ETag"] == f'"{hashlib.sha256(content).hexdigest()}"'
    # RFC 9110 section 14.1.2 ranges (inclusive last byte), checked against Python's slicing.
    for first, last in [(CHUNK_SIZE - 1, CHUNK_SIZE), (CHUNK_SIZE - 10, 2 * CHUNK_SIZE + 1),
                        (CHUNK_SIZE, CHUNK_SIZE), (2 * CHUNK_SIZE, len(content) - 1),
                        (0, CHUNK_SIZE - 1)]:
        part = api.get(path, headers={"Range": f"bytes={first}-{last}"})
        assert part.status_code == 206, (first, last)
        assert part.data == content[first:last + 1], (first, last)
        assert part.headers["ETag"] == whole.headers["ETag"]
        assert part.headers["Content-Range"] == f"bytes {first}-{last}/{len(content)}"


def test_the_stage_document_follows_the_holder(api, tmp_path):
    set_up_model(api, tmp_path)
    _registered(api, tmp_path, b"first", tag="v1")
    _registered(api, tmp_path, b"second", tag="v2")
    api.post("/models/m/versions/1/promote", {"stage": "live"}, role="approver")
    live = api.get("/models/m/stages/live/document")
    assert live.status_code == 200 and live.data == b"first"
    assert live.headers["Cache-Control"] == "no-cache"
    api.post("/models/m/versions/2/promote", {"stage": "live"}, role="approver")
    moved = api.get("/models/m/stages/live/document",
                    headers={"If-None-Match": live.headers["ETag"]})
    assert moved.status_code == 200 and moved.data == b"second"


def test_unknown_model_version_and_stage_are_404_problems(api, tmp_path):
    set_up_model(api, tmp_path)
    _registered(api, tmp_path)
    for path in ("/models/nobody/versions/1/document", "/models/m/versions/7/document",
                 "/models/nobody/stages/live/document", "/models/m/stages/attic/document"):
        response = api.get(path)
        assert response.status_code == 404, path
        assert problem(response)["type"].endswith("/not-found"), path


def test_a_stage_nobody_holds_is_a_404_with_its_own_title(api, tmp_path):
    set_up_model(api, tmp_path)
    _registered(api, tmp_path)
    response = api.get("/models/m/stages/live/document")
    document = problem(response)
    assert response.status_code == 404
    assert document["type"].endswith("/stage-not-held")
    assert document["title"] == "No version holds this stage"


def test_a_large_document_streams_without_being_loaded_whole(api, tmp_path):
    set_up_model(api, tmp_path)
    size = 24 * 1024 * 1024
    content = hashlib.sha256(b"seed").digest() * (size // 32)
    _registered(api, tmp_path, content)
    expected = hashlib.sha256(content).hexdigest()
    del content
    response = api.get("/models/m/versions/1/document", buffered=False)
    digest = hashlib.sha256()
    tracemalloc.start()
    try:
        chunks = 0
        for chunk in response.response:
            digest.update(chunk)
            chunks += 1
        _, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
        response.close()
    assert digest.hexdigest() == expected
    assert chunks >= 24  # a chunk of a megabyte at a time
    assert peak < 6 * 1024 * 1024, f"peak {peak} bytes while streaming {size}"
