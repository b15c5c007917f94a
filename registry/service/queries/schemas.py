"""Avro schemas and feature definitions as plain trees and tables for the version pages.

Schema trees follow the Avro specification's declaration forms (records, enums, arrays, maps,
unions, fixed, logical types); anything unexpected is shown as its JSON text rather than refused.
Comparisons use registry.schema's diff and registry.features' semantic diff; a stored schema
they cannot read falls back to its fields side by side.
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field
from typing import Any

from registry.schema.labels import type_label

MAX_TREE_DEPTH = 12


@dataclass(frozen=True)
class SchemaNode:
    name: str
    type_label: str
    doc: str = ""
    details: tuple[str, ...] = ()
    children: tuple[SchemaNode, ...] = ()


def _children(schema: Any, depth: int) -> tuple[SchemaNode, ...]:
    if depth > MAX_TREE_DEPTH:
        return ()
    if isinstance(schema, list):
        return tuple(node for branch in schema for node in _children(branch, depth + 1))
    if not isinstance(schema, dict):
        return ()
    kind = schema.get("type")
    if kind in ("record", "error") and isinstance(schema.get("fields"), list):
        return tuple(field_node(f, depth + 1) for f in schema["fields"] if isinstance(f, dict))
    if kind == "array":
        return _children(schema.get("items"), depth + 1)
    if kind == "map":
        return _children(schema.get("values"), depth + 1)
    if isinstance(kind, (dict, list)):
        return _children(kind, depth + 1)
    return ()


def _details(schema: Any) -> tuple[str, ...]:
    details: list[str] = []
    target = schema if isinstance(schema, dict) else {}
    if isinstance(target.get("type"), dict):
        target = target["type"]
    if isinstance(target, dict):
        if isinstance(target.get("symbols"), list):
            details.append("symbols: " + ", ".join(str(s) for s in target["symbols"]))
        if "size" in target:
            details.append(f"size: {target['size']}")
    return tuple(details)


def field_node(definition: dict, depth: int = 0) -> SchemaNode:
    details = list(_details(definition.get("type")))
    if "default" in definition:
        details.append(f"default: {json.dumps(definition['default'])[:60]}")
    if isinstance(definition.get("aliases"), list):
        details.append("aliases: " + ", ".join(str(a) for a in definition["aliases"]))
    return SchemaNode(name=str(definition.get("name", "?")),
                      type_label=type_label(definition.get("type")),
                      doc=str(definition.get("doc", "")), details=tuple(details),
                      children=_children(definition.get("type"), depth + 1))


def schema_tree(schema: Any) -> SchemaNode | None:
    if schema is None:
        return None
    name = schema.get("name", "") if isinstance(schema, dict) else ""
    namespace = schema.get("namespace", "") if isinstance(schema, dict) else ""
    full = f"{namespace}.{name}" if namespace and name else str(name)
    return SchemaNode(name=full or "schema", type_label=type_label(schema),
                      doc=str(schema.get("doc", "")) if isinstance(schema, dict) else "",
                      details=_details(schema), children=_children(schema, 0))


def leaf_types(schema: Any, prefix: str = "", depth: int = 0) -> dict[str, str]:
    """Field path -> type label, for the side-by-side structural comparison."""
    found: dict[str, str] = {}
    if depth > MAX_TREE_DEPTH or not isinstance(schema, dict):
        return found
    for definition in schema.get("fields", []) if schema.get("type") in ("record", "error") else []:
        if not isinstance(definition, dict):
            continue
        path = f"{prefix}/{definition.get('name', '?')}"
        found[path] = type_label(definition.get("type"))
        if isinstance(definition.get("type"), dict):
            found.update(leaf_types(definition["type"], path, depth + 1))
    return found


@dataclass(frozen=True)
class SchemaChange:
    path: str
    kind: str
    message: str
    classification: str  # breaking for readers | breaking for writers | safe | ...


@dataclass(frozen=True)
class SchemaComparison:
    method: str  # "diff" (registry.schema) or "fields" (structural)
    changes: tuple[SchemaChange, ...] = ()
    rows: tuple[tuple[str, str, str, bool], ...] = ()  # path, old type, new type, differs
    note: str = ""


def compare_schemas(old: Any, new: Any) -> SchemaComparison:
    if old is None or new is None:
        return SchemaComparison("fields", note="one of the versions has no such schema")
    from registry import schema as avro

    try:
        result = avro.diff(avro.load(json.dumps(old)), avro.load(json.dumps(new)))
    except Exception as error:  # an unreadable stored schema: fall back to the field list
        note = f"the schema diff could not read these schemas ({type(error).__name__})"
        return _field_rows(old, new, note)
    changes = tuple(SchemaChange(str(c.path), str(c.kind), str(c.message),
                                 str(getattr(c.classification, "value", c.classification)))
                    for c in result.changes)
    return SchemaComparison("diff", changes=changes)


def _field_rows(old: Any, new: Any, note: str) -> SchemaComparison:
    before, after = leaf_types(old), leaf_types(new)
    paths = list(before) + [p for p in after if p not in before]
    rows = tuple((p, before.get(p, "—"), after.get(p, "—"), before.get(p) != after.get(p))
                 for p in paths)
    return SchemaComparison("fields", rows=rows, note=note)


@dataclass(frozen=True)
class FeatureRow:
    name: str
    description: str
    unit: str
    domain: str
    nullable: str
    other: tuple[tuple[str, str], ...] = field(default_factory=tuple)


def _text(value: Any) -> str:
    if value is None:
        return ""
    if isinstance(value, str):
        return value
    if isinstance(value, dict):
        if "categories" in value and isinstance(value["categories"], list):
            return "one of " + ", ".join(str(c) for c in value["categories"])
        if "min" in value or "max" in value:
            return f"{value.get('min', '−∞')} to {value.get('max', '∞')}"
    return json.dumps(value, sort_keys=True, default=str)[:200]


def feature_definitions(features: Any) -> Any:
    """The stored definitions as registry.features reads them (the JSON array registration
    stores, docs/stored-shapes.md), or None when they are absent or unreadable."""
    if features is None:
        return None
    from registry.features import parse_feature_list

    try:
        return parse_feature_list(features, origin="stored definitions")
    except Exception:  # definitions this build cannot read
        return None


def _domain_text(domain: Any) -> str:
    if domain is None:
        return ""
    if hasattr(domain, "values"):
        return "one of " + ", ".join(str(v) for v in domain.values)
    if hasattr(domain, "minimum"):
        return f"{_number_text(domain.minimum)} to {_number_text(domain.maximum)}"
    return _text(domain)


def _number_text(value: float) -> str:
    if value == float("inf"):
        return "∞"
    if value == float("-inf"):
        return "−∞"
    return f"{value:g}"


def _rows_of_definitions(definitions: Any) -> list[FeatureRow]:
    rows = []
    for d in definitions.definitions:
        other = []
        if d.source is not None:
            other.append(("source", f"{d.source.dataset} column {d.source.column}"))
        for key in ("transform", "owner"):
            if getattr(d, key, None):
                other.append((key, str(getattr(d, key))))
        rows.append(FeatureRow(name=d.path, description=d.description, unit=d.unit or "",
                               domain=_domain_text(d.domain),
                               nullable="yes" if d.nullable else "no", other=tuple(other)))
    return rows


def feature_rows(features: Any) -> list[FeatureRow]:
    """Feature definitions as rows, read by registry.features from the form registration
    stores; none when they are absent or unreadable."""
    definitions = feature_definitions(features)
    return _rows_of_definitions(definitions) if definitions is not None else []


@dataclass(frozen=True)
class FeatureDifference:
    name: str
    aspect: str
    before: str
    after: str
    severity: str = ""  # from registry.features: breaking, needs-review, safe
    message: str = ""


def compare_features(old: Any, new: Any, old_schema: Any = None,
                     new_schema: Any = None) -> list[FeatureDifference]:
    """The semantic diff of registry.features when both versions' definitions are readable
    by it (the schemas supply renames through aliases); otherwise a field-by-field comparison."""
    semantic = _semantic_feature_diff(old, new, old_schema, new_schema)
    if semantic is not None:
        return semantic
    before = {r.name: r for r in feature_rows(old)}
    after = {r.name: r for r in feature_rows(new)}
    found = []
    for name in list(before) + [n for n in after if n not in before]:
        a, b = before.get(name), after.get(name)
        if a is None or b is None:
            found.append(FeatureDifference(name, "added" if a is None else "removed",
                                           "" if a is None else a.unit,
                                           "" if b is None else b.unit))
            continue
        for aspect in ("unit", "domain", "nullable", "description"):
            if getattr(a, aspect) != getattr(b, aspect):
                found.append(FeatureDifference(name, aspect, getattr(a, aspect),
                                               getattr(b, aspect)))
        if a.other != b.other:
            found.append(FeatureDifference(name, "other", _text(dict(a.other)),
                                           _text(dict(b.other))))
    return found


def _semantic_feature_diff(old: Any, new: Any, old_schema: Any,
                           new_schema: Any) -> list[FeatureDifference] | None:
    old_definitions, new_definitions = feature_definitions(old), feature_definitions(new)
    if old_definitions is None or new_definitions is None:
        return None
    try:
        from registry import schema as avro
        from registry.features import diff_features

        def loaded(schema: Any) -> Any:
            return avro.load(json.dumps(schema)) if schema is not None else None

        result = diff_features(old_definitions, loaded(old_schema), new_definitions,
                               loaded(new_schema))
    except Exception:  # definitions that contradict their schema: compare field by field
        return None
    return [FeatureDifference(name=c.path, aspect=c.change, before=_text(c.before),
                              after=_text(c.after), severity=str(c.severity),
                              message=c.message) for c in result.changes]
