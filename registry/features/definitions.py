"""Feature definitions read from TOML: what each input field means, in which unit and domain.

A definitions file holds one table per leaf field of the input schema under `[features]`, keyed
by the field's dotted path (`[features.mean_pressure_kpa]`, `[features."location.easting"]`); a
manifest may carry the same `[features]` table inline. docs/feature-definitions.md has the format.
"""

from __future__ import annotations

import math
import re
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from registry.errors import UserError
from registry.features.units import parse_unit


class FeatureDefinitionError(UserError):
    """A feature definitions file or table that cannot be read as definitions."""


@dataclass(frozen=True)
class NumericRange:
    """The closed interval of values a numeric feature may take; either end may be infinite."""

    minimum: float
    maximum: float

    def contains(self, other: NumericRange) -> bool:
        return self.minimum <= other.minimum and other.maximum <= self.maximum


@dataclass(frozen=True)
class Categories:
    """The values a categorical feature may take, in the order they were written."""

    values: tuple[str | int, ...]


Domain = NumericRange | Categories


@dataclass(frozen=True)
class Source:
    """Where a feature's values come from: a dataset in the catalogue and one of its columns."""

    dataset: str
    column: str


@dataclass(frozen=True)
class FeatureDefinition:
    """The meaning of one leaf field of the input schema."""

    path: str
    description: str
    unit: str | None = None
    domain: Domain | None = None
    nullable: bool = False
    source: Source | None = None
    transform: str | None = None
    owner: str | None = None
    place: str = field(default="", compare=False)  # where it was written, for error messages


@dataclass(frozen=True)
class FeatureDefinitions:
    """All definitions of one version, by field path."""

    definitions: tuple[FeatureDefinition, ...]
    origin: str = field(default="", compare=False)

    @property
    def paths(self) -> tuple[str, ...]:
        return tuple(definition.path for definition in self.definitions)

    def get(self, path: str) -> FeatureDefinition | None:
        for definition in self.definitions:
            if definition.path == path:
                return definition
        return None


_DEFINITION_KEYS = ("description", "unit", "range", "categories", "nullable", "source",
                    "transform", "owner")
_SOURCE_KEYS = ("dataset", "column")


def load_feature_definitions(path: str | Path) -> FeatureDefinitions:
    """Read a definitions file from disk."""
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise FeatureDefinitionError("no such file", place=str(path)) from None
    except (OSError, UnicodeDecodeError) as error:
        raise FeatureDefinitionError(f"cannot read the file: {error}", place=str(path)) from None
    return parse_feature_file(text, origin=path.name)


def parse_feature_file(text: str, *, origin: str) -> FeatureDefinitions:
    """Parse the text of a definitions file: a `[features]` table and nothing else."""
    try:
        document = tomllib.loads(text)
    except tomllib.TOMLDecodeError as error:
        raise FeatureDefinitionError(f"not valid TOML: {error}", place=origin) from None
    unknown = sorted(set(document) - {"features"})
    if unknown:
        raise FeatureDefinitionError(
            f"unknown top-level keys {', '.join(unknown)}; a definitions file holds only a "
            "[features] table", place=origin)
    if "features" not in document:
        raise FeatureDefinitionError("no [features] table", place=origin)
    return parse_feature_table(document["features"], origin=origin)


def parse_feature_table(table: Any, *, origin: str) -> FeatureDefinitions:
    """Parse a `[features]` table, as read from a definitions file or a manifest."""
    if not isinstance(table, Mapping):
        raise FeatureDefinitionError("[features] must be a table of field definitions",
                                     place=origin)
    definitions = [_parse_definition(path, body, origin)
                   for path, body in _flatten(table, prefix=(), origin=origin)]
    return FeatureDefinitions(definitions=tuple(definitions), origin=origin)


def _flatten(table: Mapping[str, Any], prefix: tuple[str, ...],
             origin: str) -> list[tuple[str, Mapping[str, Any]]]:
    """Yield (dotted path, definition table) pairs.

    `[features.location.easting]` (unquoted dots) makes TOML nest tables; a table that holds
    only tables and none of the definition keys is therefore read as a path prefix.
    """
    found: list[tuple[str, Mapping[str, Any]]] = []
    for key, body in table.items():
        path = (*prefix, key)
        dotted = ".".join(path)
        if not isinstance(body, Mapping):
            raise FeatureDefinitionError(
                "a definition must be a table, e.g. [features.pipe_age_years]",
                place=_place(origin, dotted))
        is_prefix = bool(body) and all(isinstance(value, Mapping) for value in body.values()) \
            and not set(body) & set(_DEFINITION_KEYS)
        if is_prefix:
            found.extend(_flatten(body, path, origin))
        else:
            found.append((dotted, body))
    return found


def _place(origin: str, path: str, key: str | None = None) -> str:
    # TOML bare keys are letters, digits, "_" and "-"; anything else (a dotted path) is quoted.
    quoted = path if re.fullmatch(r"[A-Za-z0-9_-]+", path) else f'"{path}"'
    where = f"[features.{quoted}]" + (f".{key}" if key else "")
    return f"{origin} {where}" if origin else where


def _parse_definition(path: str, body: Mapping[str, Any], origin: str) -> FeatureDefinition:
    def fail(message: str, key: str | None = None) -> FeatureDefinitionError:
        return FeatureDefinitionError(message, place=_place(origin, path, key))

    unknown = sorted(set(body) - set(_DEFINITION_KEYS))
    if unknown:
        raise fail(f"unknown keys {', '.join(unknown)}; a definition may have "
                   f"{', '.join(_DEFINITION_KEYS)}")
    description = body.get("description")
    if not isinstance(description, str) or not description.strip():
        raise fail("every definition needs a description (non-empty text)", "description")

    unit = body.get("unit")
    if unit is not None:
        if not isinstance(unit, str):
            raise fail("unit must be a UCUM code as text, e.g. \"kPa\"", "unit")
        parse_unit(unit, place=_place(origin, path, "unit"))

    if "range" in body and "categories" in body:
        raise fail("a domain is either a range or categories, not both")
    domain: Domain | None = None
    if "range" in body:
        domain = _parse_range(body["range"], fail)
    elif "categories" in body:
        domain = _parse_categories(body["categories"], fail)

    nullable = body.get("nullable", False)
    if not isinstance(nullable, bool):
        raise fail("nullable must be true or false", "nullable")

    source = None
    if "source" in body:
        source = _parse_source(body["source"], fail)

    text_values = {}
    for key in ("transform", "owner"):
        value = body.get(key)
        if value is not None and (not isinstance(value, str) or not value.strip()):
            raise fail(f"{key} must be non-empty text", key)
        text_values[key] = value

    return FeatureDefinition(path=path, description=description.strip(), unit=unit,
                             domain=domain, nullable=nullable, source=source,
                             transform=text_values["transform"], owner=text_values["owner"],
                             place=_place(origin, path))


def _is_number(value: Any) -> bool:
    return isinstance(value, (int, float)) and not isinstance(value, bool)


def _parse_range(value: Any, fail: Any) -> NumericRange:
    if not (isinstance(value, list) and len(value) == 2 and all(map(_is_number, value))):
        raise fail("range must be two numbers [minimum, maximum] (inf and -inf allowed)",
                   "range")
    minimum, maximum = value
    if math.isnan(minimum) or math.isnan(maximum):
        raise fail("range bounds must be numbers, not nan", "range")
    if minimum > maximum:
        raise fail(f"range minimum {minimum} is greater than its maximum {maximum}", "range")
    return NumericRange(minimum=minimum, maximum=maximum)


def _parse_categories(value: Any, fail: Any) -> Categories:
    if not isinstance(value, list) or not value:
        raise fail("categories must be a non-empty list", "categories")
    all_text = all(isinstance(item, str) for item in value)
    all_integers = all(isinstance(item, int) and not isinstance(item, bool) for item in value)
    if not (all_text or all_integers):
        raise fail("categories must all be text or all be integers", "categories")
    duplicates = sorted({str(item) for item in value if value.count(item) > 1})
    if duplicates:
        raise fail(f"categories repeat {', '.join(duplicates)}", "categories")
    return Categories(values=tuple(value))


def _parse_source(value: Any, fail: Any) -> Source:
    if not isinstance(value, Mapping):
        raise fail("source must be a table { dataset = \"...\", column = \"...\" }", "source")
    unknown = sorted(set(value) - set(_SOURCE_KEYS))
    if unknown:
        raise fail(f"unknown keys {', '.join(unknown)}; a source has dataset and column",
                   "source")
    for key in _SOURCE_KEYS:
        if not isinstance(value.get(key), str) or not value[key].strip():
            raise fail(f"source needs {key} (non-empty text)", f"source.{key}")
    return Source(dataset=value["dataset"], column=value["column"])


def features_from_manifest(manifest: Mapping[str, Any], *,
                           manifest_path: str | Path) -> FeatureDefinitions | None:
    """The definitions a version manifest gives: a path to a file, or an inline [features] table.

    A path is relative to the manifest. None when the manifest names no features.
    """
    manifest_path = Path(manifest_path)
    value = manifest.get("features")
    if value is None:
        return None
    if isinstance(value, str):
        return load_feature_definitions(manifest_path.parent / value)
    if isinstance(value, Mapping):
        return parse_feature_table(value, origin=manifest_path.name)
    raise FeatureDefinitionError(
        "features must be the path of a definitions file or a [features] table",
        place=f"{manifest_path.name} features")


def render_feature_file(definitions: FeatureDefinitions) -> str:
    """Write definitions as a definitions file that parse_feature_file reads back unchanged.

    For the catalogue to keep a version's definitions as text, whatever form they came in.
    """
    lines: list[str] = []
    for definition in definitions.definitions:
        if lines:
            lines.append("")
        path = definition.path
        key = path if re.fullmatch(r"[A-Za-z0-9_-]+", path) else _toml_string(path)
        lines.append(f"[features.{key}]")
        lines.append(f"description = {_toml_string(definition.description)}")
        if definition.unit is not None:
            lines.append(f"unit = {_toml_string(definition.unit)}")
        if isinstance(definition.domain, NumericRange):
            bounds = ", ".join(_toml_number(bound) for bound in
                               (definition.domain.minimum, definition.domain.maximum))
            lines.append(f"range = [{bounds}]")
        elif isinstance(definition.domain, Categories):
            values = ", ".join(_toml_string(value) if isinstance(value, str) else str(value)
                               for value in definition.domain.values)
            lines.append(f"categories = [{values}]")
        if definition.nullable:
            lines.append("nullable = true")
        if definition.source is not None:
            lines.append(f"source = {{ dataset = {_toml_string(definition.source.dataset)}, "
                         f"column = {_toml_string(definition.source.column)} }}")
        for name in ("transform", "owner"):
            value = getattr(definition, name)
            if value is not None:
                lines.append(f"{name} = {_toml_string(value)}")
    return "\n".join(lines) + "\n"


def _toml_string(text: str) -> str:
    # A JSON string with non-ASCII kept is also a TOML basic string (TOML 1.0, "String").
    import json

    return json.dumps(text, ensure_ascii=False)


def _toml_number(value: float) -> str:
    if math.isinf(value):
        return "inf" if value > 0 else "-inf"
    return repr(value) if isinstance(value, float) else str(value)
