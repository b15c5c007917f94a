"""Reading request bodies strictly: the right content type, valid JSON, known fields only, each
of the declared type. The JSON Schema given to `json_body` is also what the OpenAPI document
shows, so the check and the documentation are one thing."""

from __future__ import annotations

import json
from typing import Any

from flask import current_app, request

from registry.api.problems import ApiError
from registry.nesting import nesting_depth

# Far deeper than any Avro schema or fingerprint needs, and far shallower than the recursion
# limit of the parsers that read the body next.
MAX_DEPTH = 64
JSON_TYPES = {"string": str, "integer": int, "object": dict, "array": list, "boolean": bool,
              "null": type(None)}


def refuse_oversize_body() -> None:
    """Refuse an upload by its Content-Length before reading a byte of it; a body sent without
    one is cut off by MAX_CONTENT_LENGTH as it streams (werkzeug's limited stream)."""
    limit = current_app.config.get("MAX_CONTENT_LENGTH")
    length = request.content_length
    if limit is not None and length is not None and length > limit:
        raise ApiError(f"the body is {length} bytes; this server accepts at most {limit}",
                       kind="payload-too-large", status=413, place="Content-Length")


def require_media_type(*accepted: str) -> None:
    if request.mimetype not in accepted:
        got = request.mimetype or "no content type"
        raise ApiError(f"the body is {got}; this operation takes {' or '.join(accepted)}",
                       kind="unsupported-media-type", status=415, place="Content-Type")


def json_body(schema: dict[str, Any], *, required: bool = True) -> dict[str, Any]:
    """The JSON object of the body, checked against a small JSON Schema (object of typed
    properties). An absent body reads as {} when the body is optional."""
    if not required and not request.content_length and request.mimetype in ("", None):
        value: Any = {}
    else:
        require_media_type("application/json")
        raw = request.get_data(cache=False)
        try:
            value = json.loads(raw)
        except (UnicodeDecodeError, json.JSONDecodeError) as error:
            raise ApiError(f"the body is not valid JSON: {error}", kind="malformed-json",
                           status=400, place="body") from None
        except RecursionError:
            raise ApiError(f"the body nests deeper than {MAX_DEPTH} levels", kind="bad-input",
                           status=400, place="body") from None
        if nesting_depth(value) > MAX_DEPTH:
            raise ApiError(f"the body nests deeper than {MAX_DEPTH} levels", kind="bad-input",
                           status=400, place="body")
    check_value(value, schema, "body")
    return value


def check_value(value: Any, schema: dict[str, Any], place: str) -> None:
    """The subset of JSON Schema our bodies use: type, properties, required,
    additionalProperties=false, items, maxLength, minimum, enum."""
    types = schema.get("type")
    if types is not None:
        names = [types] if isinstance(types, str) else list(types)
        if not any(_is_type(value, name) for name in names):
            raise ApiError(f"expected {' or '.join(names)}, got {_type_name(value)}",
                           kind="bad-input", status=400, place=place)
    if "enum" in schema and value not in schema["enum"]:
        raise ApiError(f"expected one of {', '.join(map(str, schema['enum']))}", kind="bad-input",
                       status=400, place=place)
    if isinstance(value, str) and len(value) > schema.get("maxLength", len(value)):
        raise ApiError(f"longer than {schema['maxLength']} characters", kind="bad-input",
                       status=400, place=place)
    if _is_type(value, "integer") and value < schema.get("minimum", value):
        raise ApiError(f"must be at least {schema['minimum']}", kind="bad-input", status=400,
                       place=place)
    if isinstance(value, dict):
        properties = schema.get("properties", {})
        if schema.get("additionalProperties") is False:
            unknown = sorted(set(value) - set(properties))
            if unknown:
                raise ApiError(f"unknown field(s) {', '.join(unknown)}; this operation takes "
                               f"{', '.join(sorted(properties)) or 'no fields'}",
                               kind="unknown-fields", status=400, place=f"{place}/{unknown[0]}")
        for name in schema.get("required", ()):
            if name not in value:
                raise ApiError(f"missing field {name!r}", kind="bad-input", status=400,
                               place=f"{place}/{name}")
        for name, item in value.items():
            if name in properties:
                check_value(item, properties[name], f"{place}/{name}")
    if isinstance(value, list) and "items" in schema:
        for index, item in enumerate(value):
            check_value(item, schema["items"], f"{place}/{index}")


def _is_type(value: Any, name: str) -> bool:
    if name == "integer":
        return isinstance(value, int) and not isinstance(value, bool)
    if name == "number":
        return isinstance(value, (int, float)) and not isinstance(value, bool)
    return isinstance(value, JSON_TYPES[name])


def _type_name(value: Any) -> str:
    for name in ("null", "boolean", "integer", "string", "array", "object"):
        if _is_type(value, name):
            return name
    return "number"


def strict_object(properties: dict[str, Any], required: tuple[str, ...] = ()) -> dict[str, Any]:
    """A JSON Schema object that takes only these properties."""
    schema: dict[str, Any] = {"type": "object", "properties": properties,
                              "additionalProperties": False}
    if required:
        schema["required"] = list(required)
    return schema


TEXT = {"type": "string", "maxLength": 100_000}
NAME = {"type": "string", "maxLength": 100}
WAIVERS = {"type": "array", "items": strict_object({"gate": NAME, "reason": TEXT},
                                                   ("gate", "reason"))}
