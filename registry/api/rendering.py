"""JSON responses: the same plain documents the CLI prints with --json."""

from __future__ import annotations

import json
from typing import Any

from flask import Response

from registry.names import check_name
from registry.plain import to_plain


def json_response(document: Any, status: int = 200, headers: dict[str, str] | None = None
                  ) -> Response:
    response = Response(json.dumps(to_plain(document), allow_nan=False, default=str),
                        status=status, mimetype="application/json")
    for name, value in (headers or {}).items():
        response.headers[name] = value
    return response


def path_name(value: str, what: str) -> str:
    """A name taken from the URL, refused as bad input (not "not found") when it could never
    be a name: a path, markup, a quote."""
    return check_name(value, what=what)
