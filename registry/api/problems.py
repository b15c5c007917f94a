"""Errors as RFC 9457 problem documents (application/problem+json), one stable `type` per kind.

Every `type` is `https://lockkeeper.invalid/problems/<kind>`: an absolute URI that never changes
and never resolves (`.invalid` is reserved by RFC 2606), so clients match on it, not on text.
The `kind` slugs are those of registry.errors plus the HTTP-only kinds below.
"""

from __future__ import annotations

import json
from collections.abc import Callable
from typing import Any

from flask import Blueprint, Flask, Response, request
from werkzeug.exceptions import HTTPException

from registry.errors import LockkeeperError

PROBLEM_BASE = "https://lockkeeper.invalid/problems/"
PROBLEM_MEDIA_TYPE = "application/problem+json"

# kind -> title; the title of a kind never changes (RFC 9457 section 3.1.3).
TITLES = {
    "bad-input": "The request is not valid",
    "bad-manifest": "The version manifest is not valid",
    "malformed-json": "The body is not valid JSON",
    "unknown-fields": "The body has fields this operation does not take",
    "not-found": "No such thing in the catalogue",
    "stage-not-held": "No version holds this stage",
    "too-many-waiting": "Too many requests are already waiting for a change",
    "already-exists": "The name is already taken",
    "invalid-content": "The content parsed but is not acceptable",
    "invalid-schema": "The Avro schema is not valid",
    "features-contradict-schema": "The feature definitions contradict the input schema",
    "unreadable-evaluation-record": "A stored evaluation is not an evaluation record",
    "unconvertible-row": "A stored row is in no shape the upgrade knows",
    "changed-row": "A stored row differs from what the audit chain recorded",
    "dataset-file": "The dataset file cannot be read",
    "dataset-value": "A value in the dataset does not fit its schema",
    "dataset-columns": "The dataset's columns do not match its schema",
    "dataset-empty": "The dataset has no records",
    "forbidden": "The token's role does not allow this",
    "unauthenticated": "A valid bearer token is needed",
    "refused": "The catalogue refused this",
    "conflict": "A concurrent change got there first",
    "catalogue-unavailable": "The catalogue cannot be reached",
    "payload-too-large": "The upload is larger than this server accepts",
    "unsupported-media-type": "The body has a content type this operation does not take",
    "method-not-allowed": "This path does not take that method",
    "not-acceptable": "The server cannot produce the representation asked for",
    "server-error": "The server failed; nothing was changed",
}

# HTTP errors raised by Flask or Werkzeug themselves (routing, body limits).
HTTP_KINDS = {400: "bad-input", 401: "unauthenticated", 403: "forbidden", 404: "not-found",
              405: "method-not-allowed", 406: "not-acceptable", 409: "conflict",
              413: "payload-too-large", 415: "unsupported-media-type"}


class ApiError(LockkeeperError):
    """An error only the HTTP shell can meet; `kind` and `http_status` set per instance."""

    def __init__(self, message: str, *, kind: str, status: int, place: str | None = None) -> None:
        super().__init__(message, place=place)
        self.kind = kind
        self.http_status = status


def problem_type(kind: str) -> str:
    return PROBLEM_BASE + kind


def problem_response(kind: str, status: int, detail: str, place: str | None = None,
                     headers: dict[str, str] | None = None,
                     extensions: dict[str, object] | None = None) -> Response:
    document = {"type": problem_type(kind), "title": TITLES.get(kind, kind.replace("-", " ")),
                "status": status, "detail": detail, "instance": request.path}
    if place is not None:
        document["place"] = place
    document.update(extensions or {})
    response = Response(json.dumps(document), status=status, mimetype=PROBLEM_MEDIA_TYPE)
    for name, value in (headers or {}).items():
        response.headers[name] = value
    if status == 401:
        response.headers["WWW-Authenticate"] = 'Bearer realm="lockkeeper"'
    return response


# Members some errors carry besides the place (a schema error: the file, line and column).
EXTENSION_MEMBERS = ("source", "line", "column")


def _from_lockkeeper_error(error: LockkeeperError) -> Response:
    extensions = {name: getattr(error, name) for name in EXTENSION_MEMBERS
                  if getattr(error, name, None) not in (None, "")}
    return problem_response(error.kind, error.http_status, " ".join(error.message.split()),
                            error.place, extensions=extensions)


def _from_http_exception(error: HTTPException) -> Response:
    status = error.code or 500
    kind = HTTP_KINDS.get(status, "bad-input" if status < 500 else "server-error")
    headers = {}
    valid_methods = getattr(error, "valid_methods", None)  # set by werkzeug's MethodNotAllowed
    if status == 405 and valid_methods:
        headers["Allow"] = ", ".join(valid_methods)
    return problem_response(kind, status, error.description or error.name, headers=headers)


def _from_unexpected(error: Exception) -> Response:
    from flask import current_app

    if isinstance(error, RecursionError):
        # Only input nested past the parsers' recursion limit (a schema part of a thousand
        # levels, say) gets here: bad input, not a fault of the server.
        current_app.logger.warning("input nested too deeply on %s %s", request.method,
                                   request.path)
        return problem_response("bad-input", 400, "the input nests too deeply to be read")
    # A programming error: say so plainly and keep the traceback in the server log.
    current_app.logger.exception("unexpected error on %s %s", request.method, request.path)
    return problem_response("server-error", 500, "an unexpected error; nothing was changed")


def install_problem_handlers(blueprint: Blueprint) -> None:
    """Every error inside the API becomes a problem document."""
    blueprint.register_error_handler(LockkeeperError, _from_lockkeeper_error)
    blueprint.register_error_handler(HTTPException, _from_http_exception)
    blueprint.register_error_handler(Exception, _from_unexpected)


def install_app_problem_handler(app: Flask, prefix: str = "/api/") -> None:
    """Routing errors (404, 405) happen before a request reaches the blueprint: the app turns
    those under the API's prefix into problem documents, and hands every other path to the
    app's own handler (the web pages'), whether registered before or after this one."""
    from werkzeug.exceptions import MethodNotAllowed, NotFound

    spec = app.error_handler_spec[None]  # the app-wide handlers, by code (None: by class)
    mine: dict[int | None, Callable[[HTTPException], Any]] = {}

    def theirs(code: int | None):
        for key in (code, None):
            handler = spec.get(key, {}).get(HTTPException if key is None else
                                            {404: NotFound, 405: MethodNotAllowed}[key])
            if handler is not None and handler is not mine.get(key):
                return handler
        return None

    for code in (None, 404, 405):
        def handle(error: HTTPException, code=code):
            if request.path.startswith(prefix):
                return _from_http_exception(error)
            previous = earlier.get(code) or theirs(code)
            return previous(error) if previous is not None else error

        mine[code] = handle
    earlier = {code: theirs(code) for code in mine}  # code handlers the app had already
    for code, handler in mine.items():
        app.register_error_handler(code or HTTPException, handler)
