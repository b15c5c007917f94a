"""Lineage both ways (what went into a node, what came of it) and the recall of a dataset.

GET /lineage?node=NODE&direction=up|down|both[&depth=N][&format=json|prov-json], where NODE is
`dataset/NAME` (or NAME), `MODEL@N`, `model/M/version/N` or `model/M/stage/S`, as for the CLI.
"""

from __future__ import annotations

from typing import Any

from flask import g, request

from registry.api.bodies import TEXT, json_body, strict_object
from registry.api.context import catalogue
from registry.api.problems import ApiError
from registry.api.rendering import json_response, path_name
from registry.api.routing import route
from registry.errors import UserError
from registry.service import lineage as lineage_service
from registry.service import recall as recall_service

LINEAGE_QUERY: tuple[dict[str, Any], ...] = (
    {"name": "node", "in": "query", "required": True,
     "schema": {"type": "string", "maxLength": 300}},
    {"name": "direction", "in": "query", "required": True,
     "schema": {"type": "string", "enum": list(lineage_service.DIRECTIONS)}},
    {"name": "depth", "in": "query", "required": False,
     "schema": {"type": "integer", "minimum": 0, "maximum": lineage_service.MAX_DEPTH}},
    {"name": "format", "in": "query", "required": False,
     "schema": {"type": "string", "enum": ["json", "prov-json"]}},
)
RECALL_BODY = strict_object({"reason": TEXT}, ("reason",))


def _query() -> tuple[str, str, int | None, str]:
    known = {parameter["name"] for parameter in LINEAGE_QUERY}
    unknown = sorted(set(request.args) - known)
    if unknown:
        raise ApiError(f"unknown query parameter(s) {', '.join(unknown)}; this operation takes "
                       f"{', '.join(sorted(known))}", kind="unknown-fields", status=400,
                       place=unknown[0])
    node = request.args.get("node", "")
    direction = request.args.get("direction", "")
    if not node:
        raise UserError("say which node: ?node=dataset/NAME, MODEL@N, model/M/version/N or "
                        "model/M/stage/S", place="node")
    if direction not in lineage_service.DIRECTIONS:
        raise UserError(f"direction must be one of {', '.join(lineage_service.DIRECTIONS)}",
                        place="direction")
    depth_text = request.args.get("depth")
    depth = None
    if depth_text is not None:
        if not depth_text.isdigit() or len(depth_text) > 5:
            raise UserError(f"depth must be a whole number from 0 to "
                            f"{lineage_service.MAX_DEPTH}", place="depth")
        depth = lineage_service.check_depth(int(depth_text))
    output = request.args.get("format", "json")
    if output not in ("json", "prov-json"):
        raise UserError("format must be json or prov-json", place="format")
    return node, direction, depth, output


@route("/lineage", "GET", summary="The lineage of a node: what went into it (up), what came "
       "of it (down), or both", tag="lineage", query=LINEAGE_QUERY)
def lineage():
    node, direction, depth, output = _query()
    if output == "prov-json":
        return json_response(lineage_service.provenance_of(catalogue(), node, direction, depth))
    return json_response(lineage_service.lineage_of(catalogue(), node, direction, depth))


@route("/datasets/<dataset>/recall", "POST", action="dataset.recall",
       summary="Recall a dataset: flag everything downstream and block it from promotion",
       tag="lineage", body=RECALL_BODY)
def recall_dataset(dataset: str):
    body = json_body(RECALL_BODY)
    return json_response(recall_service.recall_dataset(
        catalogue(), path_name(dataset, "dataset"), body["reason"], g.actor))
