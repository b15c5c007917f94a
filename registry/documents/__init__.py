"""Model documents: PFA documents digested over canonical JSON, other artifacts as bytes."""

from registry.documents.canonical_json import (
                                               CanonicalDigest,
                                               MalformedJson,
                                               MeasuredValue,
                                               canonical_digest,
                                               canonical_dumps,
                                               canonical_json,
                                               format_double,
)
from registry.documents.pfa import CellSummary, InvalidPfaDocument, PfaSummary, read_pfa
from registry.documents.reader import (
                                               DocumentSummary,
                                               MissingInputSchema,
                                               SchemaContradiction,
                                               document_kind,
                                               read_document,
)

__all__ = [
    "CanonicalDigest", "CellSummary", "DocumentSummary", "InvalidPfaDocument", "MalformedJson",
    "MeasuredValue", "MissingInputSchema", "PfaSummary", "SchemaContradiction",
    "canonical_digest", "canonical_dumps", "canonical_json", "document_kind", "format_double",
    "read_document", "read_pfa",
]
