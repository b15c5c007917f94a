"""Reading request bodies strictly: the right content type, valid JSON, known fields only, each
of the declared type. The JSON Schema given to `json_body` (or `check_form`) is also what the
OpenAPI document shows, and the jsonschema library checks bodies against it, so the document
never advertises what the server ignores."""

from __future__ import annotations

import json
from functools import lru_cache
from typing import Any

from flask import current_app, request
from jsonschema import Draft202012Validator  # type: ignore[import-untyped]  # no type info
from jsonschema.exceptions import ValidationError  # type: ignore[import-untyped]  # no type info

from registry.api.problems import ApiError
from registry.nesting import nesting_depth

# Far deeper than any Avro schema or fingerprint needs, and far shallower than the recursion
# limit of the parsers that read the body next.
MAX_DEPTH = 64


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
    """The JSON object of the body, checked against its JSON Schema. An absent body reads as {}
    when the body is optional."""
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
    """Validate `value` against the very JSON Schema (draft 2020-12, as OpenAPI 3.1 uses) that
    the OpenAPI document publishes for it; the first problem becomes a 400 problem document
    naming the field, as a JSON-pointer-like path under `place`."""
    errors = sorted(_validator(schema).iter_errors(value), key=_error_order)
    if errors:
        raise _problem(errors[0], place)


def check_form(schema: dict[str, Any]) -> None:
    """Validate a multipart/form-data body against its published JSON Schema: each text field
    as a string (or an array of strings where the schema says so), each file as a binary
    string, unknown parts refused."""
    properties = schema.get("properties", {})
    instance: dict[str, Any] = {}
    for name in set(request.form) | set(request.files):
        values = request.form.getlist(name) + ["<file>" for _ in request.files.getlist(name)]
        is_list = properties.get(name, {}).get("type") == "array"
        instance[name] = values if is_list or len(values) > 1 else values[0]
    check_value(instance, schema, "form")


@lru_cache(maxsize=256)
def _validator_for(schema_text: str) -> Draft202012Validator:
    return Draft202012Validator(json.loads(schema_text))


def _validator(schema: dict[str, Any]) -> Draft202012Validator:
    return _validator_for(json.dumps(schema, sort_keys=True))


def _error_order(error: ValidationError) -> tuple:
    # Unknown fields first (the commonest client mistake), then the shallowest problem.
    return (error.validator != "additionalProperties", len(error.absolute_path),
            [str(part) for part in error.absolute_path])


def _problem(error: ValidationError, place: str) -> ApiError:
    path = "/".join([place, *(str(part) for part in error.absolute_path)])
    if error.validator == "additionalProperties":
        allowed = sorted(error.schema.get("properties", {}))
        unknown = sorted(set(error.instance) - set(allowed))
        return ApiError(f"unknown field(s) {', '.join(unknown)}; this operation takes "
                        f"{', '.join(allowed) or 'no fields'}", kind="unknown-fields",
                        status=400, place=f"{path}/{unknown[0]}")
    if error.validator == "required":
        missing = next(name for name in error.validator_value if name not in error.instance)
        return ApiError(f"missing field {missing!r}", kind="bad-input", status=400,
                        place=f"{path}/{missing}")
    return ApiError(_plain_message(error), kind="bad-input", status=400, place=path)


def _plain_message(error: ValidationError) -> str:
    rule, value = error.validator, error.validator_value
    if rule == "type":
        names = [value] if isinstance(value, str) else list(value)
        return f"expected {' or '.join(names)}, got {_type_name(error.instance)}"
    if rule == "enum":
        return f"expected one of {', '.join(map(str, value))}"
    if rule == "maxLength":
        return f"longer than {value} characters"
    if rule == "minimum":
        return f"must be at least {value}"
    if rule == "maximum":
        return f"must be at most {value}"
    return error.message


def _type_name(value: Any) -> str:
    for name, kind in (("null", type(None)), ("boolean", bool), ("integer", int),
                       ("string", str), ("array", list), ("object", dict)):
        if isinstance(value, kind):
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
