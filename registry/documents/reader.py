"""Read a model document for registration: what it is, its digest, and its input and output schemas.

A PFA document is digested over its canonical JSON, so that reformatting it does not make a new
version; any other artifact (a serialized estimator, an ONNX file, an archive) is digested over
its bytes as they are, and its schemas come from the manifest. docs/document-digest.md explains
what is stored and why.
"""

from __future__ import annotations

import hashlib
from dataclasses import dataclass
from typing import Literal

from registry.documents.pfa import CellSummary, read_pfa
from registry.errors import Unprocessable, UserError
from registry.schema import Schema, canonical_form


class SchemaContradiction(Unprocessable):
    """The manifest declares a schema that the document's own schema contradicts."""


class MissingInputSchema(UserError):
    """A version needs an input schema, and neither the document nor the manifest gives one."""


DocumentKind = Literal["pfa", "artifact"]
# Files read as PFA documents; everything else is an opaque artifact.
PFA_SUFFIXES = (".pfa", ".pfa.json", ".json")


@dataclass(frozen=True)
class DocumentSummary:
    """A document ready to be stored: its digest, its schemas and what it holds."""

    kind: DocumentKind
    digest: str  # SHA-256, hex: of the canonical JSON for PFA, of the bytes for an artifact
    size: int  # bytes as received and stored
    stored_bytes: bytes  # the bytes as received (see docs/document-digest.md)
    input_schema: Schema
    output_schema: Schema | None
    method: str | None  # PFA "map", "emit" or "fold"; None for an artifact
    cells: tuple[CellSummary, ...] = ()
    pools: tuple[CellSummary, ...] = ()
    function_count: int = 0
    name: str | None = None  # the PFA engine's name, when it declares one
    canonical_size: int | None = None  # bytes of the canonical JSON, for PFA


def document_kind(filename: str) -> DocumentKind:
    """PFA for .pfa, .pfa.json and .json files; an artifact otherwise."""
    return "pfa" if filename.lower().endswith(PFA_SUFFIXES) else "artifact"


def read_document(data: bytes, *, filename: str, manifest_input: Schema | None = None,
                  manifest_output: Schema | None = None,
                  kind: DocumentKind | None = None) -> DocumentSummary:
    """Read a document; fail when the manifest contradicts it or no input schema is known.

    Schemas are compared by their Parsing Canonical Form (Avro specification), so a manifest may
    repeat the document's schema with other docs, defaults or formatting.
    """
    kind = kind or document_kind(filename)
    if kind == "artifact":
        if manifest_input is None:
            raise MissingInputSchema(
                "an artifact carries no schema of its own: the manifest must name its "
                "input_schema", place="manifest input_schema")
        return DocumentSummary(kind="artifact", digest=hashlib.sha256(data).hexdigest(),
                               size=len(data), stored_bytes=data, input_schema=manifest_input,
                               output_schema=manifest_output, method=None)
    pfa = read_pfa(data, source=filename)
    _agree(manifest_input, pfa.input_schema, "input_schema", f"{filename} /input")
    _agree(manifest_output, pfa.output_schema, "output_schema", f"{filename} /output")
    return DocumentSummary(kind="pfa", digest=pfa.digest, size=len(data), stored_bytes=data,
                           input_schema=pfa.input_schema, output_schema=pfa.output_schema,
                           method=pfa.method, cells=pfa.cells, pools=pfa.pools,
                           function_count=pfa.function_count, name=pfa.name,
                           canonical_size=pfa.canonical_size)


def _agree(declared: Schema | None, own: Schema, key: str, where: str) -> None:
    if declared is None:
        return
    declared_form, own_form = canonical_form(declared), canonical_form(own)
    if declared_form == own_form:
        return
    at = next((i for i, (a, b) in enumerate(zip(declared_form, own_form, strict=False)) if a != b),
              min(len(declared_form), len(own_form)))
    start = max(at - 30, 0)
    raise SchemaContradiction(
        f"the manifest's {key} contradicts the document's own schema at {where}: their "
        f"canonical forms first differ at character {at} (manifest "
        f"...{declared_form[start:at + 30]}..., document ...{own_form[start:at + 30]}...)",
        place=f"manifest {key}")
