"""The WSGI app the serving benchmark runs under gunicorn: Lockkeeper's API, and beside it, in
the same workers, a bare app that streams the same bytes from a file a megabyte at a time."""

from __future__ import annotations

import os

from registry.api.wsgi import app as lockkeeper_app

BARE_PREFIX = "/bare"
CHUNK = 1024 * 1024


def bare_file_app(environ, start_response):
    path = os.environ["BENCH_DOCUMENT_FILE"]
    size = os.path.getsize(path)
    start_response("200 OK", [("Content-Type", "application/octet-stream"),
                              ("Content-Length", str(size))])

    def chunks():
        with open(path, "rb") as file:
            while chunk := file.read(CHUNK):
                yield chunk

    return chunks()


def app(environ, start_response):
    if environ.get("PATH_INFO", "").startswith(BARE_PREFIX):
        return bare_file_app(environ, start_response)
    return lockkeeper_app(environ, start_response)
