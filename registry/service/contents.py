"""Reading what a registration holds: document, schemas and features, checked, as plain data."""

from __future__ import annotations

import hashlib
import json
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

from registry.errors import UserError

if TYPE_CHECKING:
    from registry.service.registration import RegistrationRequest


@dataclass(frozen=True)
class VersionContents:
    document_kind: str
    document_digest: str
    stored_document: bytes
    document_summary: dict[str, Any]
    input_schema_json: str
    output_schema_json: str | None
    features_json: str | None


def _schema_json(text: str, place: str) -> str:
    """Parse and validate an Avro schema; keep its normalised JSON form (full names)."""
    from registry import schema as avro

    parsed = avro.load(text, source=place)
    return json.dumps(avro.to_json(parsed), sort_keys=True, separators=(",", ":"))


def read_version_contents(request: RegistrationRequest) -> VersionContents:
    if request.input_schema_text is None:
        raise UserError("the manifest names no input schema (`input_schema`), and every version "
                        "needs one", place="manifest")
    input_json = _schema_json(request.input_schema_text, "input_schema")
    output_json = (_schema_json(request.output_schema_text, "output_schema")
                   if request.output_schema_text is not None else None)
    return VersionContents(
        document_kind="artifact",
        document_digest=hashlib.sha256(request.document).hexdigest(),
        stored_document=request.document,
        document_summary={"size": len(request.document), "name": request.document_name},
        input_schema_json=input_json, output_schema_json=output_json, features_json=None)
