"""The OpenAPI 3.1 document of the API, built from the metadata every route declares
(registry.api.routing.route), so a route cannot exist without its entry here."""

from __future__ import annotations

import re
from functools import lru_cache
from typing import Any

from registry.api.problems import PROBLEM_BASE, PROBLEM_MEDIA_TYPE, TITLES
from registry.api.routing import API_PREFIX, LARGEST_NUMBER, OPERATIONS, Operation
from registry.names import NAME_PATTERN
from registry.service.authorisation import permission

RULE_PARAMETER = re.compile(r"<(?:(\w+):)?(\w+)>")

PROBLEM_SCHEMA = {
    "type": "object",
    "description": "RFC 9457 problem document; `type` is " + PROBLEM_BASE + "<kind>, one of: "
                   + ", ".join(sorted(TITLES)),
    "properties": {"type": {"type": "string", "format": "uri"}, "title": {"type": "string"},
                   "status": {"type": "integer"}, "detail": {"type": "string"},
                   "instance": {"type": "string"},
                   "place": {"type": "string", "description": "the place at fault"}},
    "required": ["type", "title", "status", "detail"],
}
ERROR_STATUSES = {400: "Bad input (problem document)", 404: "Not found (problem document)",
                  409: "Conflict (problem document)", 413: "Body too large (problem document)",
                  415: "Wrong content type (problem document)",
                  422: "Unacceptable content (problem document)",
                  503: "Catalogue unavailable (problem document)"}
AUTH_STATUSES = {401: "Missing or unknown token (problem document)",
                 403: "The token's role does not allow this (problem document)"}


def openapi_path(rule: str) -> str:
    return API_PREFIX + RULE_PARAMETER.sub(lambda m: "{" + m.group(2) + "}", rule)


def _path_parameters(rule: str) -> list[dict[str, Any]]:
    parameters = []
    for converter, name in RULE_PARAMETER.findall(rule):
        schema: dict[str, Any] = ({"type": "integer", "minimum": 0, "maximum": LARGEST_NUMBER}
                                  if converter == "number" else
                                  {"type": "string", "pattern": NAME_PATTERN.pattern})
        parameters.append({"name": name, "in": "path", "required": True, "schema": schema})
    return parameters


def _operation(operation: Operation) -> dict[str, Any]:
    document: dict[str, Any] = {"operationId": operation.operation_id,
                                "summary": operation.summary, "tags": [operation.tag]}
    parameters = _path_parameters(operation.rule) + list(operation.query)
    if operation.rule == "/models/<model>/stages/<stage>":
        parameters.append({"name": "If-None-Match", "in": "header", "required": False,
                           "schema": {"type": "string"}})
    if parameters:
        document["parameters"] = parameters
    content = {}
    if operation.body is not None:
        content["application/json"] = {"schema": operation.body}
    if operation.form is not None:
        content["multipart/form-data"] = {"schema": operation.form}
    if content:
        required = operation.body_required or operation.form is not None
        document["requestBody"] = {"required": required, "content": content}
    responses: dict[str, Any] = {}
    for status, description in operation.responses.items():
        entry: dict[str, Any] = {"description": description}
        if status != 304:
            entry["content"] = {"application/json": {"schema": operation.response_schema or {}}}
        responses[str(status)] = entry
    errors = dict(ERROR_STATUSES)
    if not operation.public:
        errors.update(AUTH_STATUSES)
        document["security"] = [{"bearer": []}]
    if operation.action is not None:
        rule = permission(operation.action)
        document["description"] = (f"Needs a token of a user holding the "
                                   f"{' or '.join(rule.roles)} role ({rule.what}).")
    for status, description in sorted(errors.items()):
        responses.setdefault(str(status), {"description": description, "content": {
            PROBLEM_MEDIA_TYPE: {"schema": {"$ref": "#/components/schemas/Problem"}}}})
    document["responses"] = responses
    return document


@lru_cache(maxsize=1)
def document() -> dict[str, Any]:
    paths: dict[str, dict[str, Any]] = {}
    for operation in OPERATIONS:
        paths.setdefault(openapi_path(operation.rule), {})[operation.method.lower()] = \
            _operation(operation)
    return {
        "openapi": "3.1.0",
        "info": {"title": "Lockkeeper API", "version": "1",
                 "description": "Model release registry: models, versions, stages, gates and "
                                "the audit log. Bearer tokens come from `lockkeeper token "
                                "create`. Errors are RFC 9457 problem documents."},
        "paths": dict(sorted(paths.items())),
        "components": {
            "schemas": {"Problem": PROBLEM_SCHEMA},
            "securitySchemes": {"bearer": {"type": "http", "scheme": "bearer"}},
        },
    }
