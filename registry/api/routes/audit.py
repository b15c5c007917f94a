"""`audit verify` over HTTP: recompute the audit chain and every stored digest."""

from __future__ import annotations

from registry.api.context import catalogue
from registry.api.rendering import json_response
from registry.api.routing import route
from registry.service import integrity


@route("/audit/verify", "GET", summary="Recompute the audit chain and every stored digest",
       tag="audit")
def verify_audit():
    return json_response(integrity.verify_catalogue(catalogue()).to_dict())
