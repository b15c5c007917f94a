"""Feature definitions as JSON: the form the catalogue stores them in (docs/stored-shapes.md).

A JSON array with one object per definition, in the order they were written, each holding the
same keys a definitions file has plus `path`. JSON has no infinity, so an unbounded end of a
range is written `null` (`[0, null]` is "0 or more"); everything else is the file's value.
"""

from __future__ import annotations

import json
import math
from collections.abc import Mapping
from typing import Any

from registry.features.definitions import (
    Categories,
    FeatureDefinition,
    FeatureDefinitionError,
    FeatureDefinitions,
    NumericRange,
    parse_feature_table,
)


def feature_list(definitions: FeatureDefinitions) -> list[dict[str, Any]]:
    """One JSON-ready object per definition; keys a definition leaves out are left out."""
    return [_as_object(definition) for definition in definitions.definitions]


def _as_object(definition: FeatureDefinition) -> dict[str, Any]:
    item: dict[str, Any] = {"path": definition.path, "description": definition.description}
    if definition.unit is not None:
        item["unit"] = definition.unit
    if isinstance(definition.domain, NumericRange):
        item["range"] = [_bound(definition.domain.minimum), _bound(definition.domain.maximum)]
    elif isinstance(definition.domain, Categories):
        item["categories"] = list(definition.domain.values)
    if definition.nullable:
        item["nullable"] = True
    if definition.source is not None:
        item["source"] = {"dataset": definition.source.dataset,
                          "column": definition.source.column}
    for name in ("transform", "owner"):
        value = getattr(definition, name)
        if value is not None:
            item[name] = value
    return item


def _bound(value: float) -> float | None:
    return None if math.isinf(value) else value


def definitions_json(definitions: FeatureDefinitions) -> str:
    """The stored text: compact, keys sorted within each definition, definitions in order."""
    return json.dumps(feature_list(definitions), sort_keys=True, separators=(",", ":"),
                      ensure_ascii=False, allow_nan=False)


def parse_feature_list(items: Any, *, origin: str) -> FeatureDefinitions:
    """Read definitions from their JSON form, with the checks a definitions file gets."""
    if not isinstance(items, list):
        raise FeatureDefinitionError("stored feature definitions must be a JSON array",
                                     place=origin)
    table: dict[str, Any] = {}
    for position, item in enumerate(items):
        if not isinstance(item, Mapping) or not isinstance(item.get("path"), str) \
                or not item["path"]:
            raise FeatureDefinitionError("each definition must be an object with a path",
                                         place=f"{origin} [{position}]")
        body = {key: value for key, value in item.items() if key != "path"}
        if isinstance(body.get("range"), list) and len(body["range"]) == 2:
            low, high = body["range"]
            body["range"] = [-math.inf if low is None else low, math.inf if high is None else high]
        if item["path"] in table:
            raise FeatureDefinitionError(f"{item['path']} is defined twice",
                                         place=f"{origin} [{position}]")
        table[item["path"]] = body
    return parse_feature_table(table, origin=origin)


def definitions_from_json(text: str, *, origin: str) -> FeatureDefinitions:
    try:
        items = json.loads(text)
    except json.JSONDecodeError as error:
        raise FeatureDefinitionError(f"not JSON: {error}", place=origin) from None
    return parse_feature_list(items, origin=origin)
