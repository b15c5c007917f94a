"""The documents themselves, exactly as registered: of a version, or of whoever holds a stage.

The bytes stream from the catalogue a chunk at a time, so a document larger than memory is
served without being loaded whole; a large one comes from the server's own checked copy once it
has one (registry/service/document_cache.py). ETag is the SHA-256 of the bytes (what a release
statement's subject names); If-None-Match gives 304; a single byte range (RFC 9110 section 14)
gives 206.
"""

from __future__ import annotations

from collections.abc import Iterable
from typing import BinaryIO

from flask import Response, request
from werkzeug.wsgi import ClosingIterator, wrap_file

from registry.api.context import catalogue, document_cache
from registry.api.problems import problem_response
from registry.api.rendering import path_name
from registry.api.routing import route
from registry.service.document_fetch import StoredDocument, document_chunks, find_document
from registry.store.blob_store import CHUNK_SIZE

VERSION_HEADER = "Lockkeeper-Version"  # which version's document this is, for a stage's holder
DOCUMENT_RESPONSES = {200: "The document's bytes", 206: "Partial Content: the range asked for",
                      304: "Not Modified: the client has these bytes",
                      404: "No such model, version or stage, or nobody holds the stage",
                      416: "Range Not Satisfiable"}


def _byte_range(document: StoredDocument) -> tuple[int, int] | None | Response:
    """(start, end) of the one range asked for; None for the whole document (no Range, an
    If-Range that no longer matches, or several ranges, which RFC 9110 lets a server ignore)."""
    asked = request.range
    if asked is None or asked.units != "bytes" or len(asked.ranges) != 1:
        return None
    if_range = request.if_range
    if if_range.etag is not None and if_range.etag != document.sha256:
        return None
    if if_range.date is not None:
        return None  # we give no Last-Modified, so a date never matches
    span = asked.range_for_length(document.size)
    if span is None:
        return problem_response("bad-input", 416, f"the range is outside the document's "
                                f"{document.size} bytes", place="Range",
                                headers={"Content-Range": f"bytes */{document.size}"})
    return span


def serve_document(document: StoredDocument, *, immutable: bool) -> Response:
    headers = {"ETag": f'"{document.sha256}"', "Accept-Ranges": "bytes",
               VERSION_HEADER: str(document.version),
               "Content-Disposition": f'attachment; filename="{document.file_name}"',
               # A version's document never changes; a stage's holder may at any time.
               "Cache-Control": "private, max-age=31536000, immutable" if immutable
               else "no-cache"}
    if request.if_none_match.contains_weak(document.sha256):
        return Response(status=304, headers=headers)
    span = _byte_range(document)
    if isinstance(span, Response):
        return span
    start, end = span if span else (0, document.size)
    if span:
        headers["Content-Range"] = f"bytes {start}-{end - 1}/{document.size}"
    headers["Content-Length"] = str(end - start)
    body = _body(document, start, end, whole=not span)
    return Response(body, status=206 if span else 200, headers=headers,
                    mimetype=document.media_type, direct_passthrough=True)


def _body(document: StoredDocument, start: int, end: int, *, whole: bool) -> Iterable[bytes]:
    """The bytes [start, end): from the server's copy when it has one it trusts (the whole
    file through the WSGI server's file wrapper, which may send it without copying), else from
    the catalogue, keeping a copy on the way when the whole document is asked for."""
    cache = document_cache()
    copy = cache.open(document.sha256, document.size)
    if copy is None:
        chunks = document_chunks(catalogue(), document, start, end)
        return cache.filling(document.sha256, document.size, chunks) if whole else chunks
    if whole:
        return wrap_file(request.environ, copy, CHUNK_SIZE)
    # Closed with the response, even one never read (HEAD): a generator not yet started would
    # not run its own clean-up.
    return ClosingIterator(_file_range(copy, start, end), copy.close)


def _file_range(copy: BinaryIO, start: int, end: int) -> Iterable[bytes]:
    copy.seek(start)
    while start < end and (chunk := copy.read(min(CHUNK_SIZE, end - start))):
        start += len(chunk)
        yield chunk


@route("/models/<model>/versions/<number:version>/document", "GET", summary="A version's "
       "document, byte for byte as registered (ETag: its SHA-256; Range supported)",
       tag="documents", responses=DOCUMENT_RESPONSES)
def version_document(model: str, version: int):
    document = find_document(catalogue(), path_name(model, "model"), version=version)
    return serve_document(document, immutable=True)


@route("/models/<model>/stages/<stage>/document", "GET", summary="The document of the version "
       "holding a stage now (ETag: its SHA-256; Range supported)", tag="documents",
       responses=DOCUMENT_RESPONSES)
def stage_document(model: str, stage: str):
    document = find_document(catalogue(), path_name(model, "model"),
                             stage=path_name(stage, "stage"))
    return serve_document(document, immutable=False)
