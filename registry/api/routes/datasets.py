"""Datasets: registered from an uploaded file (the catalogue fingerprints it) or from a
fingerprint the producer computed on its side (`lockkeeper dataset fingerprint --json`).

POST /datasets takes either
  application/json     {"name", "fingerprint": {...}, "role", "derived_from": [...],
                        "feed_of", "source_uri", "sources": [{"path", "size", "sha256"}]}
  multipart/form-data  part `file` (Avro, Parquet or CSV), optional part `schema` (.avsc), and
                       fields name, role, format, key (repeatable), exclude (repeatable),
                       derived_from (repeatable), feed_of, source_uri
"""

from __future__ import annotations

import json
import os

from flask import g, request

from registry.api.bodies import NAME, check_form, json_body, require_media_type, strict_object
from registry.api.context import catalogue
from registry.api.rendering import json_response, path_name
from registry.api.routing import route
from registry.api.uploads import file_part, form_value, form_values, saved_upload
from registry.errors import UserError
from registry.service import datasets

ROLE = {"type": "string", "enum": list(datasets.DATASET_ROLES)}
URI = {"type": "string", "maxLength": 4096}
DATASET_BODY = strict_object({
    "name": NAME, "role": ROLE, "fingerprint": {"type": "object"}, "source_uri": URI,
    "derived_from": {"type": "array", "items": NAME}, "feed_of": {"type": ["string", "null"],
                                                                 "maxLength": 100},
    "sources": {"type": "array", "maxItems": 100_000, "items": strict_object({
        "path": {"type": "string", "minLength": 1, "maxLength": 4096},
        "size": {"type": "integer", "minimum": 0},
        "sha256": {"type": "string", "pattern": "^[0-9a-f]{64}$"}},
        ("path", "size", "sha256"))},
}, ("name", "fingerprint"))
TEXT_FIELD = {"type": "string"}
DATASET_FORM = {
    "type": "object",
    "properties": {"file": {"type": "string", "format": "binary"},
                   "schema": {"type": "string", "format": "binary"},
                   "name": TEXT_FIELD, "role": ROLE,
                   "format": {"type": "string", "enum": ["avro", "parquet", "csv"]},
                   "key": {"type": "array", "items": TEXT_FIELD},
                   "exclude": {"type": "array", "items": TEXT_FIELD},
                   "derived_from": {"type": "array", "items": TEXT_FIELD},
                   "feed_of": TEXT_FIELD, "source_uri": TEXT_FIELD},
    "required": ["file", "name"], "additionalProperties": False,
}


def _fingerprint_from_json(value: dict):
    from registry.datasets import DatasetFingerprint
    from registry.datasets.fingerprint_checks import check_fingerprint_document

    check_fingerprint_document(value, place="body/fingerprint")
    try:
        return DatasetFingerprint.from_dict(value)
    except UserError as error:
        raise UserError(error.message, place="body/fingerprint") from None
    except (AttributeError, KeyError, TypeError, ValueError) as error:
        raise UserError(f"not a dataset fingerprint ({type(error).__name__}: {error})",
                        place="body/fingerprint") from None


def _request_from_json() -> datasets.DatasetRequest:
    body = json_body(DATASET_BODY)
    return datasets.DatasetRequest(
        name=path_name(body["name"], "dataset"), role=body.get("role", "source"),
        fingerprint=_fingerprint_from_json(body["fingerprint"]),
        source_uri=body.get("source_uri", ""), derived_from=tuple(body.get("derived_from", ())),
        feed_of=body.get("feed_of"), sources=tuple(
            (s["path"], s["size"], s["sha256"]) for s in body.get("sources", ())))


def _schema_part() -> dict | None:
    upload = request.files.get("schema")
    if upload is None:
        return None
    try:
        return json.loads(upload.read())
    except (UnicodeDecodeError, json.JSONDecodeError) as error:
        raise UserError(f"the schema is not JSON ({error})", place="schema") from None


def _request_from_upload() -> datasets.DatasetRequest:
    from registry.datasets import fingerprint_dataset

    check_form(DATASET_FORM)
    name = path_name(form_value("name") or "", "dataset")
    upload = file_part("file")
    schema = _schema_part()
    with saved_upload(upload, "dataset") as path:
        run = fingerprint_dataset([str(path)], schema_json=schema, format=form_value("format"),
                                  keys=form_values("key"), exclude=form_values("exclude"))
    # the file as the producer named it, not the name it was saved under here
    sent_as = os.path.basename(upload.filename or "") or path.name
    return datasets.DatasetRequest(
        name=name, role=form_value("role", "source"), fingerprint=run.fingerprint,
        source_uri=form_value("source_uri", "") or f"upload:{path.name}",
        derived_from=form_values("derived_from"), feed_of=form_value("feed_of"),
        sources=tuple((sent_as, source.size, source.sha256) for source in run.sources))


@route("/datasets", "GET", summary="Every registered dataset", tag="datasets")
def list_datasets():
    return json_response({"datasets": datasets.list_datasets(catalogue())})


@route("/datasets/<dataset>", "GET", summary="A registered dataset: lineage, fingerprint "
       "and profile", tag="datasets")
def show_dataset(dataset: str):
    return json_response(datasets.show_dataset(catalogue(), path_name(dataset, "dataset")))


@route("/datasets", "POST", action="dataset.add", summary="Register a dataset from an uploaded "
       "file or from a fingerprint computed by the producer", tag="datasets",
       body=DATASET_BODY, form=DATASET_FORM,
       responses={201: "Created", 200: "Already registered with this content; nothing changed"})
def add_dataset():
    require_media_type("application/json", "multipart/form-data")
    dataset_request = (_request_from_json() if request.mimetype == "application/json"
                       else _request_from_upload())
    summary = datasets.add_dataset(catalogue(), dataset_request, g.actor)
    return json_response(summary, 201 if summary.created else 200,
                         {"Location": f"/api/v1/datasets/{summary.name}"})
