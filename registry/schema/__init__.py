"""Avro schemas: parsing, resolution (compatibility), canonical form, fingerprints and diff.

Apache Avro Specification 1.11/1.12: Schema Declaration, Aliases, Schema Resolution, Parsing
Canonical Form for Schemas, Schema Fingerprints, Logical Types.
"""

from registry.schema.diff import Change, SchemaDiff, diff
from registry.schema.errors import SchemaError
from registry.schema.fingerprints import Fingerprint, crc64_avro, fingerprint
from registry.schema.leaves import LeafField, leaf_fields
from registry.schema.loading import load
from registry.schema.model import (
    NO_DEFAULT,
    PRIMITIVE_TYPES,
    Array,
    Enum,
    Field,
    Fixed,
    IgnoredLogicalType,
    LogicalType,
    Map,
    NamedSchema,
    Primitive,
    Record,
    Schema,
    Union,
)
from registry.schema.names import Names
from registry.schema.parser import parse
from registry.schema.resolution import (
    Note,
    Problem,
    Resolution,
    check_against_all,
    check_backward,
    check_both,
    check_forward,
    reads,
    resolution_document,
    resolve,
)
from registry.schema.serialise import canonical_form, to_json

__all__ = [
    "NO_DEFAULT", "PRIMITIVE_TYPES", "Array", "Change", "Enum", "Field", "Fingerprint", "Fixed",
    "IgnoredLogicalType", "LeafField", "LogicalType", "Map", "NamedSchema", "Names", "Note",
    "Primitive", "Problem", "Record", "Resolution", "Schema", "SchemaDiff", "SchemaError", "Union",
    "canonical_form", "check_against_all", "check_backward", "check_both", "check_forward",
    "crc64_avro", "diff", "fingerprint", "leaf_fields", "load", "parse", "reads",
    "resolution_document", "resolve", "to_json",
]
