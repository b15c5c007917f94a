"""The API about itself: a constant answer for health checks, and its OpenAPI document."""

from __future__ import annotations

from registry.api.rendering import json_response
from registry.api.routing import route

PING = {"service": "lockkeeper", "api": "v1", "ok": True}


@route("/ping", "GET", public=True, summary="A constant answer: the server is up", tag="meta")
def ping():
    return json_response(PING)


@route("/openapi.json", "GET", public=True, summary="This API's OpenAPI 3.1 document", tag="meta")
def openapi_document():
    from registry.api.openapi import document

    return json_response(document())
