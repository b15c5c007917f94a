"""Reading what a registration holds: document, schemas and features, checked, as plain data.

Everything here is pure and runs before the registration's transaction opens.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from typing import Any

from registry import schema as avro
from registry.documents import read_document
from registry.errors import UserError
from registry.features import (
    check_features,
    definitions_json,
    parse_feature_file,
    parse_feature_table,
)
from registry.manifest import Manifest


@dataclass(frozen=True)
class RegistrationRequest:
    """Everything a registration needs, already read from files or an upload."""

    model: str
    document: bytes
    document_name: str
    manifest: Manifest
    input_schema_text: str | None = None
    output_schema_text: str | None = None
    features_text: str | None = None


@dataclass(frozen=True)
class VersionContents:
    document_kind: str
    document_digest: str
    stored_document: bytes
    document_summary: dict[str, Any]
    input_schema_json: str
    output_schema_json: str | None
    features_json: str | None
    missing_features: tuple[str, ...] = ()


class FeaturesContradictSchema(UserError):
    kind = "features-contradict-schema"


def schema_text(schema: avro.Schema) -> str:
    """The normalised JSON form the catalogue stores (full names, sorted keys)."""
    return json.dumps(avro.to_json(schema), sort_keys=True, separators=(",", ":"))


def _summary(document) -> dict[str, Any]:
    """What the web page and `model show` say about the document, besides its bytes."""
    def cells(items) -> list[dict[str, Any]]:
        return [{"name": c.name, "type": avro.to_json(c.type), "size": c.size, "items": c.items,
                 "shared": c.shared, "source": c.source} for c in items]

    return {"kind": document.kind, "name": document.name, "size": document.size,
            "canonical_size": document.canonical_size, "method": document.method,
            "cells": cells(document.cells), "pools": cells(document.pools),
            "function_count": document.function_count}


def _features(request: RegistrationRequest, input_schema: avro.Schema
              ) -> tuple[str | None, tuple[str, ...]]:
    if request.features_text is not None:
        definitions = parse_feature_file(request.features_text,
                                         origin=request.manifest.features or "features")
    elif request.manifest.inline_features is not None:
        definitions = parse_feature_table(request.manifest.inline_features,
                                          origin="manifest [features]")
    else:
        return None, ()
    verdict = check_features(definitions, input_schema)
    contradictions = [p for p in verdict.problems if p.rule != "missing-definition"]
    if contradictions:
        first = contradictions[0]
        more = f" (and {len(contradictions) - 1} more)" if len(contradictions) > 1 else ""
        raise FeaturesContradictSchema(f"{first.message}{more}", place=f"features {first.path}")
    return definitions_json(definitions), verdict.missing


def read_version_contents(request: RegistrationRequest) -> VersionContents:
    manifest_input = (avro.load(request.input_schema_text, source="input_schema")
                      if request.input_schema_text is not None else None)
    manifest_output = (avro.load(request.output_schema_text, source="output_schema")
                       if request.output_schema_text is not None else None)
    document = read_document(request.document, filename=request.document_name,
                             manifest_input=manifest_input, manifest_output=manifest_output)
    features_json, missing = _features(request, document.input_schema)
    return VersionContents(
        document_kind=document.kind, document_digest=document.digest,
        stored_document=document.stored_bytes, document_summary=_summary(document),
        input_schema_json=schema_text(document.input_schema),
        output_schema_json=(schema_text(document.output_schema)
                            if document.output_schema is not None else None),
        features_json=features_json, missing_features=tuple(missing))
