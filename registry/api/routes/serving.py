"""After release: served batches and outcomes sent back by serving systems, and the report.

POST /models/{model}/served and POST /models/{model}/outcomes take multipart/form-data: part
`file` (Parquet, Avro container or CSV), for a CSV batch part `schema` (.avsc), and field
`format` when the file's name does not tell it. The upload streams to a temporary file (never
held in memory) and is cut off at the server's MAX_CONTENT_LENGTH.
"""

from __future__ import annotations

import json

from flask import g, request

from registry.api.bodies import check_form, require_media_type
from registry.api.context import catalogue
from registry.api.rendering import json_response, path_name
from registry.api.routing import route
from registry.api.uploads import file_part, form_value, saved_upload
from registry.errors import UserError
from registry.service import serving, serving_reports

TEXT_FIELD = {"type": "string"}
FORMAT = {"type": "string", "enum": ["avro", "parquet", "csv"]}
SERVED_FORM = {
    "type": "object",
    "properties": {"file": {"type": "string", "format": "binary"},
                   "schema": {"type": "string", "format": "binary"}, "format": FORMAT},
    "required": ["file"], "additionalProperties": False,
}
OUTCOMES_FORM = {
    "type": "object",
    "properties": {"file": {"type": "string", "format": "binary"}, "format": FORMAT},
    "required": ["file"], "additionalProperties": False,
}
REPORT_QUERY = (
    {"name": "version", "in": "query", "required": False,
     "schema": {"type": "integer", "minimum": 1}},
    {"name": "since", "in": "query", "required": False,
     "schema": {"type": "string", "maxLength": 40}},
    {"name": "window", "in": "query", "required": False,
     "schema": {"type": "string", "maxLength": 8}},
)


def _format() -> str | None:
    chosen = form_value("format")
    if chosen is not None and chosen not in FORMAT["enum"]:
        raise UserError("format must be avro, parquet or csv", place="format")
    return chosen


def _schema_part() -> dict | None:
    upload = request.files.get("schema")
    if upload is None:
        return None
    try:
        schema = json.loads(upload.read())
    except (UnicodeDecodeError, json.JSONDecodeError) as error:
        raise UserError(f"the schema is not JSON ({error})", place="schema") from None
    if not isinstance(schema, dict):
        raise UserError("the schema must be an Avro record", place="schema")
    return schema


@route("/models/<model>/served", "POST", action="serving.record",
       summary="Record a batch of served rows: row_id, served_at, version, the prediction and "
       "the inputs", tag="serving",
       form=SERVED_FORM, responses={201: "Recorded", 200: "This batch was recorded before; "
                                    "nothing changed"})
def record_served(model: str):
    require_media_type("multipart/form-data")
    check_form(SERVED_FORM)
    name = path_name(model, "model")
    file_format, schema = _format(), _schema_part()
    with saved_upload(file_part("file"), "served.parquet") as path:
        outcome = serving.record_served(catalogue(), name, str(path), g.actor,
                                        format=file_format, schema_json=schema)
    return json_response(outcome, 201 if outcome["recorded"] else 200)


@route("/models/<model>/outcomes", "POST", action="serving.outcomes",
       summary="Record outcomes of rows served earlier: row_id, label, observed_at",
       tag="serving", form=OUTCOMES_FORM,
       responses={201: "Recorded", 200: "This batch was recorded before; nothing changed"})
def record_outcomes(model: str):
    require_media_type("multipart/form-data")
    check_form(OUTCOMES_FORM)
    name = path_name(model, "model")
    file_format = _format()
    with saved_upload(file_part("file"), "outcomes.csv") as path:
        outcome = serving.record_outcomes(catalogue(), name, str(path), g.actor,
                                          format=file_format)
    return json_response(outcome, 201 if outcome["recorded"] else 200)


@route("/models/<model>/serving-report", "GET", summary="Per window and version: rows served, "
       "drift, shadow agreement, live quality and the state", tag="serving", query=REPORT_QUERY)
def serving_report(model: str):
    unknown = sorted(set(request.args) - {p["name"] for p in REPORT_QUERY})
    if unknown:
        raise UserError(f"unknown query parameter {unknown[0]!r}", place=unknown[0])
    version_text = request.args.get("version")
    version = None
    if version_text is not None:
        if not version_text.isdigit() or len(version_text) > 9 or int(version_text) < 1:
            raise UserError("version must be a whole number from 1", place="version")
        version = int(version_text)
    return json_response(serving_reports.serving_report(
        catalogue(), path_name(model, "model"), version=version,
        since=request.args.get("since"), window=request.args.get("window")))
