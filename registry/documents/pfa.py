"""PFA documents: check the top-level structure, parse the Avro types they declare, summarise them.

Portable Format for Analytics 0.8.1 (Data Mining Group), section "Top-level fields": a document
is a JSON object with the required fields input, output and action, and the optional fields
name, method, cells, pools, fcns, begin, end, merge, zero, randseed, doc, version, metadata and
options; any object may also carry a locator mark "@". Cells and pools hold type, init, shared,
rollback and source.
"""

from __future__ import annotations

import json
import re
from dataclasses import dataclass
from typing import Any

from registry.documents.canonical_json import CanonicalDigest, MeasuredValue, canonical_digest
from registry.errors import Unprocessable, UserError
from registry.schema import Names, Schema, SchemaError, parse
from registry.schema.defaults import check_json_encoded
from registry.schema.model import Array, Enum, Fixed, Primitive, Union


class InvalidPfaDocument(Unprocessable):
    """A JSON document that breaks the structure the PFA specification gives a document."""


REQUIRED_FIELDS = ("input", "output", "action")
OPTIONAL_FIELDS = ("name", "method", "cells", "pools", "fcns", "begin", "end", "merge",
                   "options", "metadata", "version", "doc", "randseed", "zero")
LOCATOR_MARK = "@"  # PFA specification, "Locator marks": allowed in any JSON object
METHODS = ("map", "emit", "fold")
CELL_FIELDS = ("type", "init", "shared", "rollback", "source")
CELL_SOURCES = ("embedded", "json", "avro")
FUNCTION_FIELDS = ("params", "ret", "do")
# PFA specification, "Names": identifiers follow the Avro convention.
NAME_PATTERN = re.compile(r"[A-Za-z_][A-Za-z0-9_]*")

# Values that may be large and are never needed as Python objects: measured, not decoded.
_LARGE_VALUES = (("cells", "*", "init"), ("pools", "*", "init"))
INIT_CHECKED_BYTES = 4 * 1024 * 1024  # inits up to this size are decoded and checked value by value


@dataclass(frozen=True)
class CellSummary:
    """One cell or pool: its name, declared type and the size of its initial value."""

    name: str
    type: Schema
    size: int  # bytes of the canonical JSON of `init` (for a pool without init, of {})
    items: int | None  # elements or members of an embedded array or object init
    shared: bool
    rollback: bool
    source: str  # "embedded", or "json"/"avro" when init is the address of the data


@dataclass(frozen=True)
class PfaSummary:
    """What the catalogue keeps from a PFA document, besides its bytes."""

    digest: str  # SHA-256 of the canonical JSON, hex
    canonical_size: int
    name: str | None
    method: str
    input_schema: Schema
    output_schema: Schema
    cells: tuple[CellSummary, ...]
    pools: tuple[CellSummary, ...]
    function_count: int


def read_pfa(data: bytes, *, source: str = "") -> PfaSummary:
    """Check, parse and digest a PFA document given as bytes.

    Places in errors are JSON pointers into the document (`/input/fields/2/type`), or the line
    and column of malformed JSON; `source` (a file name) prefixes them.
    """
    try:
        digest = canonical_digest(data, measure=_LARGE_VALUES)
        document = _decode_without_large_values(data, digest)
        return _summarise(document, digest, data)
    except SchemaError as error:
        # A schema error keeps its pointer into the document and names the document apart.
        raise (error.with_source(source) if source else error) from None
    except UserError as error:
        if source:
            raise type(error)(error.message, place=f"{source} {error.place or '/'}") from None
        raise
    except RecursionError:
        # Python's JSON decoder recurses once per level; no real document nests this deep.
        raise Unprocessable("the document nests JSON values too deeply to be read",
                            place=source or "/") from None


def _decode_without_large_values(data: bytes, digest: CanonicalDigest) -> Any:
    """Decode the document with every measured value replaced by null.

    The canonical pass has already checked the whole text, so this cannot fail; what it builds
    is the document less its cell and pool contents.
    """
    import json

    spans = sorted((value.start, value.end) for value in digest.measured.values())
    pieces: list[bytes] = []
    previous = 3 if data.startswith(b"\xef\xbb\xbf") else 0
    for start, end in spans:
        pieces.append(data[previous:start])
        pieces.append(b"null")
        previous = end
    pieces.append(data[previous:])
    return json.loads(b"".join(pieces))


def _fail(message: str, place: str) -> InvalidPfaDocument:
    return InvalidPfaDocument(message, place=place)


def _pointer(*parts: str | int) -> str:
    """A JSON pointer (RFC 6901) to the given path."""
    escaped = (str(part).replace("~", "~0").replace("/", "~1") for part in parts)
    return "/" + "/".join(escaped)


def _summarise(document: Any, digest: CanonicalDigest, data: bytes) -> PfaSummary:
    _check_top_level_fields(document)
    method = _method_of(document)
    name = _name_of(document)
    _check_plain_fields(document)

    # Named types declared anywhere are visible to every later reference: one registry for all.
    names = Names()
    input_schema = parse(document["input"], names=names, place="/input")
    output_schema = parse(document["output"], names=names, place="/output")
    cells = _storage(document, "cells", names, digest, data)
    pools = _storage(document, "pools", names, digest, data)
    function_count = _functions(document, names)
    for key in ("begin", "action", "end", "merge"):
        if key in document:
            _declared_types(document[key], (key,), names)
    return PfaSummary(digest=digest.sha256, canonical_size=digest.size, name=name,
                      method=method, input_schema=input_schema, output_schema=output_schema,
                      cells=cells, pools=pools, function_count=function_count)


def _check_top_level_fields(document: Any) -> None:
    """A JSON object with every required field and no field PFA does not know."""
    if not isinstance(document, dict):
        raise _fail("a PFA document is a JSON object", "/")
    allowed = set(REQUIRED_FIELDS) | set(OPTIONAL_FIELDS) | {LOCATOR_MARK}
    unknown = [key for key in document if key not in allowed]
    if unknown:
        raise _fail(f"unknown top-level field{'s' if len(unknown) > 1 else ''} "
                    f"{', '.join(repr(key) for key in unknown)}; PFA allows "
                    f"{', '.join(REQUIRED_FIELDS + OPTIONAL_FIELDS)}", _pointer(unknown[0]))
    for key in REQUIRED_FIELDS:
        if key not in document:
            what = "its action" if key == "action" else f"its {key} schema"
            raise _fail(f"missing: every PFA document declares {what}", _pointer(key))


def _method_of(document: dict[str, Any]) -> str:
    """The engine's method (map by default); a fold engine must declare zero and merge."""
    method: str = document.get("method", "map")
    if method not in METHODS:
        raise _fail(f"method must be one of {', '.join(METHODS)}", "/method")
    if method == "fold":
        for key in ("zero", "merge"):
            if key not in document:
                raise _fail(f"missing: a fold engine needs {key}", _pointer(key))
    return method


def _name_of(document: dict[str, Any]) -> str | None:
    name = document.get("name")
    if name is not None and not (isinstance(name, str) and NAME_PATTERN.fullmatch(name)):
        raise _fail("name must match [A-Za-z_][A-Za-z0-9_]*", "/name")
    return name


def _check_plain_fields(document: dict[str, Any]) -> None:
    """version, randseed, doc, metadata and options: their JSON types."""
    for key in ("version", "randseed"):
        value = document.get(key)
        if value is not None and (not isinstance(value, int) or isinstance(value, bool)):
            raise _fail(f"{key} must be an integer", _pointer(key))
    if "doc" in document and not isinstance(document["doc"], str):
        raise _fail("doc must be a string", "/doc")
    metadata = document.get("metadata", {})
    if not isinstance(metadata, dict):
        raise _fail("metadata must be a JSON object of strings", "/metadata")
    for key, value in metadata.items():
        if not isinstance(value, str):
            raise _fail("metadata values must be strings", _pointer("metadata", key))
    if not isinstance(document.get("options", {}), dict):
        raise _fail("options must be a JSON object", "/options")


def _storage(document: dict[str, Any], section: str, names: Names,
             digest: CanonicalDigest, data: bytes) -> tuple[CellSummary, ...]:
    """Cells or pools (PFA specification, "Cell and pool structure")."""
    table = document.get(section, {})
    if not isinstance(table, dict):
        raise _fail(f"{section} must be a JSON object of {section}", _pointer(section))
    summaries = []
    is_pool = section == "pools"
    for cell_name, cell in table.items():
        place = _pointer(section, cell_name)
        if not NAME_PATTERN.fullmatch(cell_name):
            raise _fail("a cell or pool name must match [A-Za-z_][A-Za-z0-9_]*", place)
        if not isinstance(cell, dict):
            raise _fail("a cell or pool is a JSON object with type and init", place)
        unknown = [key for key in cell if key not in CELL_FIELDS and key != LOCATOR_MARK]
        if unknown:
            raise _fail(f"unknown field{'s' if len(unknown) > 1 else ''} "
                        f"{', '.join(repr(key) for key in unknown)}; a "
                        f"{section[:-1]} has {', '.join(CELL_FIELDS)}",
                        _pointer(section, cell_name, unknown[0]))
        if "type" not in cell:
            raise _fail("missing: the type of the value", _pointer(section, cell_name, "type"))
        if "init" not in cell and not is_pool:
            raise _fail("missing: a cell needs an initial value",
                        _pointer(section, cell_name, "init"))
        flags = {}
        for flag in ("shared", "rollback"):
            value = cell.get(flag, False)
            if not isinstance(value, bool):
                raise _fail(f"{flag} must be true or false", _pointer(section, cell_name, flag))
            flags[flag] = value
        if flags["shared"] and flags["rollback"]:
            raise _fail("rollback is incompatible with shared",
                        _pointer(section, cell_name, "rollback"))
        source = cell.get("source", "embedded")
        if source not in CELL_SOURCES:
            raise _fail(f"source must be one of {', '.join(CELL_SOURCES)}",
                        _pointer(section, cell_name, "source"))
        measured = digest.measured.get((section, cell_name, "init"))
        if source != "embedded" and (measured is None or measured.kind != "string"):
            # The init of an external source is the address of the data, a short string.
            raise _fail("with an external source, init is the URL of the data",
                        _pointer(section, cell_name, "init"))
        if is_pool and source == "embedded" and measured is not None \
                and measured.kind != "object":
            raise _fail("a pool's init is a JSON object of items",
                        _pointer(section, cell_name, "init"))
        cell_type = parse(cell["type"], names=names,
                          place=_pointer(section, cell_name, "type"))
        if source == "embedded" and measured is not None:
            _check_init(cell_type, measured, data, is_pool, _pointer(section, cell_name, "init"))
        summaries.append(CellSummary(
            name=cell_name, type=cell_type,
            size=measured.size if measured is not None else 2,
            items=measured.items if measured is not None else 0,
            shared=flags["shared"], rollback=flags["rollback"], source=source))
    return tuple(summaries)


def _check_init(cell_type: Schema, measured: MeasuredValue, data: bytes, is_pool: bool,
                place: str) -> None:
    """The initial value is the declared type in Avro's JSON encoding (PFA specification, "Cell
    and pool structure"); a pool's init holds one such value per item. An init past
    INIT_CHECKED_BYTES is held to the kind of JSON value its type needs, not decoded whole."""
    if measured.size > INIT_CHECKED_BYTES:
        if not is_pool and measured.kind not in _json_kinds(cell_type):
            raise _fail(f"the initial value does not fit the declared type: a JSON "
                        f"{measured.kind} cannot be a {cell_type.describe()}", place)
        return
    init = json.loads(data[measured.start:measured.end])
    items = init.items() if is_pool else [(None, init)]
    for item, value in items:
        found = check_json_encoded(cell_type, value)
        if found is not None:
            within, message = found
            where = place + ("" if item is None else _pointer(item)) + within
            raise _fail(f"the initial value does not fit the declared type: {message}", where)


def _json_kinds(schema: Schema) -> set[str]:
    """The kinds of JSON value that can encode a datum of `schema` (Avro, JSON Encoding)."""
    if isinstance(schema, Primitive):
        return {"null": {"null"}, "boolean": {"true", "false"}, "string": {"string"},
                "bytes": {"string"}}.get(schema.kind, {"number"})
    if isinstance(schema, (Enum, Fixed)):
        return {"string"}
    if isinstance(schema, Array):
        return {"array"}
    return {"object", "null"} if isinstance(schema, Union) else {"object"}


def _functions(document: dict[str, Any], names: Names) -> int:
    """User functions (PFA specification, "Function definition"): params, ret and do."""
    table = document.get("fcns", {})
    if not isinstance(table, dict):
        raise _fail("fcns must be a JSON object of functions", "/fcns")
    for function_name, function in table.items():
        place = _pointer("fcns", function_name)
        if not NAME_PATTERN.fullmatch(function_name):
            raise _fail("a function name must match [A-Za-z_][A-Za-z0-9_]* (no dots: calls "
                        "add the u. prefix)", place)
        if not isinstance(function, dict):
            raise _fail("a function is a JSON object with params, ret and do", place)
        for key in FUNCTION_FIELDS:
            if key not in function:
                raise _fail(f"missing: a function needs {key}", _pointer("fcns", function_name,
                                                                         key))
        unknown = [key for key in function if key not in FUNCTION_FIELDS
                   and key != LOCATOR_MARK]
        if unknown:
            raise _fail(f"unknown field {unknown[0]!r}; a function has params, ret and do",
                        _pointer("fcns", function_name, unknown[0]))
        _function_types(function, ("fcns", function_name), names)
        _declared_types(function["do"], ("fcns", function_name, "do"), names)
    return len(table)


def _function_types(function: dict[str, Any], path: tuple[str | int, ...],
                    names: Names) -> None:
    params = function["params"]
    if not isinstance(params, list):
        raise _fail("params is a JSON array of {name: type} objects", _pointer(*path, "params"))
    for index, param in enumerate(params):
        if not (isinstance(param, dict) and len(param) == 1):
            raise _fail("each parameter is a JSON object with one name and its type",
                        _pointer(*path, "params", index))
        ((param_name, param_type),) = param.items()
        parse(param_type, names=names, place=_pointer(*path, "params", index, param_name))
    parse(function["ret"], names=names, place=_pointer(*path, "ret"))


def _declared_types(expression: Any, path: tuple[str | int, ...], names: Names) -> None:
    """Register the types that expressions declare, so that later references resolve.

    PFA special forms that carry an Avro type: {"type": T, "new": ...}, {"type": T, "value":
    ...}, inline functions {"params": ..., "ret": T, "do": ...}, {"upcast": ..., "as": T} and
    the cases of {"cast": ..., "cases": [{"as": T, ...}]}.
    """
    stack: list[tuple[Any, tuple[str | int, ...]]] = [(expression, path)]
    while stack:
        node, where = stack.pop()
        if isinstance(node, list):
            stack.extend((item, (*where, index)) for index, item in enumerate(node))
            continue
        if not isinstance(node, dict):
            continue
        if "type" in node and ("new" in node or "value" in node):
            parse(node["type"], names=names, place=_pointer(*where, "type"))
        if "params" in node and "ret" in node and "do" in node:
            _function_types(node, where, names)
        if "upcast" in node and "as" in node:
            parse(node["as"], names=names, place=_pointer(*where, "as"))
        if "cast" in node and isinstance(node.get("cases"), list):
            for index, case in enumerate(node["cases"]):
                if isinstance(case, dict) and "as" in case:
                    parse(case["as"], names=names, place=_pointer(*where, "cases", index, "as"))
        skip = {"type", "as", "params", "ret"}
        # Children in reverse, so that the stack visits them in document order.
        for key in reversed(list(node)):
            if key in skip or key == LOCATOR_MARK:
                continue
            if key == "value" and "type" in node:
                continue  # a literal value, not an expression
            stack.append((node[key], (*where, key)))
