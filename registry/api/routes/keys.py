"""The catalogue's public signing keys, for anyone who checks what it signed."""

from __future__ import annotations

from registry.api.context import catalogue
from registry.api.rendering import json_response
from registry.api.routing import route
from registry.service.signing_keys import list_keys


@route("/keys", "GET", summary="Every public signing key the catalogue has had",
       tag="keys")
def keys():
    return json_response(list_keys(catalogue()))
