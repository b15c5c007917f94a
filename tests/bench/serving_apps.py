"""The WSGI app the serving benchmark runs under gunicorn: Lockkeeper's API as production runs
it (registry/api/wsgi.py, with its document cache), and beside it, in the same workers: the same
API with no document cache (`/uncached`, every byte from the catalogue), and bare apps that send
the same bytes: streamed from a file a megabyte at a time (`/bare`), or, on PostgreSQL, every
piece of the blob read in one query before the first is sent (`/bare-database`), for comparison:
what the database itself costs."""

from __future__ import annotations

import os

from registry.api.wsgi import app as lockkeeper_app
from registry.app import create_app

uncached_app = create_app(os.environ.get("LOCKKEEPER_DB"), pages=False,
                          config={"LOCKKEEPER_DOCUMENT_CACHE": ""})

BARE_PREFIX = "/bare"
UNCACHED_PREFIX = "/uncached"
DATABASE_PREFIX = "/bare-database"
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


def bare_database_app(environ, start_response):
    import psycopg
    from sqlalchemy.engine import make_url

    url = make_url(os.environ["LOCKKEEPER_DB"]).set(drivername="postgresql")
    options = url.query.get("options")
    conninfo = url.set(query={}).render_as_string(hide_password=False)
    with psycopg.connect(conninfo, options=options or "") as connection:
        pieces = [row[0] for row in connection.cursor(binary=True).execute(
            "SELECT content FROM blob_chunks WHERE digest = (SELECT digest FROM blobs "
            "ORDER BY size DESC LIMIT 1) ORDER BY position")]
    start_response("200 OK", [("Content-Type", "application/octet-stream"),
                              ("Content-Length", str(sum(map(len, pieces))))])
    return pieces


def app(environ, start_response):
    if environ.get("PATH_INFO", "").startswith(UNCACHED_PREFIX):
        environ["PATH_INFO"] = environ["PATH_INFO"][len(UNCACHED_PREFIX):]
        return uncached_app(environ, start_response)
    if environ.get("PATH_INFO", "").startswith(DATABASE_PREFIX):
        return bare_database_app(environ, start_response)
    if environ.get("PATH_INFO", "").startswith(BARE_PREFIX):
        return bare_file_app(environ, start_response)
    return lockkeeper_app(environ, start_response)
