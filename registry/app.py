"""The one application factory: the lineage browser and the HTTP API under /api/v1.

`create_app(url)` serves both; `create_app(url, pages=False)` only the API (registry/api/wsgi.py).
The catalogue is opened on first use, once per process, by the one holder both share. Pages
are sent with a strict Content-Security-Policy: they need nothing but their own origin and
never run inline script.
"""

from __future__ import annotations

import logging
import threading
from typing import TYPE_CHECKING, Any

from flask import Flask, Response, render_template, request
from werkzeug.exceptions import HTTPException, InternalServerError

from registry.errors import LockkeeperError

if TYPE_CHECKING:  # imported at run time where the catalogue is first opened
    from registry.store.catalogue import Catalogue

CONTENT_SECURITY_POLICY = (
    "default-src 'self'; script-src 'self'; style-src 'self'; img-src 'self' data:; "
    "font-src 'self'; connect-src 'self'; object-src 'none'; base-uri 'none'; "
    "form-action 'self'; frame-ancestors 'none'")

log = logging.getLogger(__name__)
HOLDER = "lockkeeper"  # app.extensions[HOLDER]: the CatalogueHolder pages and API routes share


class CatalogueHolder:
    """Opens the catalogue once per process, on the first request that needs it."""

    def __init__(self, url: str | None) -> None:
        self.url = url
        self._catalogue: Catalogue | None = None
        self._lock = threading.Lock()

    def catalogue(self) -> Catalogue:
        with self._lock:
            if self._catalogue is None:
                from registry.errors import CatalogueUnavailable, UserError
                from registry.store.catalogue import open_catalogue

                try:
                    self._catalogue = open_catalogue(self.url)
                except CatalogueUnavailable:
                    raise
                except UserError as error:
                    # A catalogue that is missing or not initialised is the server's problem,
                    # not the visitor's: answer 503 and say what to run.
                    raise CatalogueUnavailable(error.message, place=error.place) from None
            return self._catalogue

    def close(self) -> None:
        with self._lock:
            if self._catalogue is not None:
                self._catalogue.close()
                self._catalogue = None


def _secure(response: Response) -> Response:
    response.headers["Content-Security-Policy"] = CONTENT_SECURITY_POLICY
    response.headers["X-Content-Type-Options"] = "nosniff"
    response.headers["Referrer-Policy"] = "no-referrer"
    response.headers["X-Frame-Options"] = "DENY"
    response.headers["Cross-Origin-Opener-Policy"] = "same-origin"
    return response


TITLES = {400: "Bad request", 404: "Not found", 405: "Method not allowed",
          413: "Request too large", 503: "Catalogue unavailable"}


def _error_page(status: int, message: str) -> tuple[str, int]:
    title = TITLES.get(status, "Bad request" if status < 500 else "Something went wrong")
    return render_template("error.html", status=status, title=title, message=message), status


def create_app(catalogue_url: str | None = None, *, pages: bool = True,
               config: dict[str, Any] | None = None) -> Flask:
    """An application over the catalogue at `catalogue_url` (else LOCKKEEPER_DB in `config`,
    then in the environment, then the local file): the HTTP API under /api/v1 and, with
    `pages`, the web pages."""
    app = Flask("registry", static_folder=None)
    app.config.update(JSON_SORT_KEYS=False)
    if config:
        app.config.update(config)
    app.extensions[HOLDER] = CatalogueHolder(
        catalogue_url if catalogue_url is not None else app.config.get("LOCKKEEPER_DB"))
    if pages:
        _add_pages(app)

    from registry.api import register_api

    register_api(app)  # after the pages' handlers, so /api/ keeps its problem documents
    return app


def _add_pages(app: Flask) -> None:
    # Autoescaping is Flask's default for .html templates; say so explicitly for every template.
    app.jinja_options = {**app.jinja_options, "autoescape": True}

    from web import blueprint as web_blueprint

    app.register_blueprint(web_blueprint)
    app.after_request(_secure)

    @app.errorhandler(LockkeeperError)
    def typed_error(error: LockkeeperError):
        status = error.http_status if 400 <= error.http_status < 600 else 400
        return _error_page(status, error.one_line())

    @app.errorhandler(HTTPException)
    def http_error(error: HTTPException):
        if isinstance(error, InternalServerError):
            return unexpected(error)
        return _error_page(error.code or 400, error.description or error.name)

    @app.errorhandler(Exception)
    def unexpected(error: Exception):
        log.exception("unexpected error on %s", request.path)
        return _error_page(500, "the page could not be drawn; the error is in the server's log")
