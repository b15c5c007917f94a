"""Feature definitions held against the input schema: coverage and consistency.

Coverage: every leaf field has a definition (the missing ones are reported), and a definition
for a field the schema does not have is an error in the definitions themselves. Consistency:
categories against enum symbols, nullability against a union with null, a numeric domain and a
unit against the field's type.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from registry.errors import Unprocessable
from registry.features.definitions import Categories, FeatureDefinitions, NumericRange
from registry.features.fields import FLOAT_LIMIT, INTEGER_LIMITS, SchemaField, schema_fields


class UnknownFeatureField(Unprocessable):
    """A feature definition names a field the input schema does not have."""


@dataclass(frozen=True)
class FeatureProblem:
    """One way definitions and schema disagree, at one field."""

    path: str
    rule: str  # "missing-definition", "categories-vs-symbols", "nullability", ...
    message: str


@dataclass(frozen=True)
class FeatureCheck:
    """The verdict of holding definitions against a schema."""

    passed: bool
    fields: int
    defined: int
    missing: tuple[str, ...]
    problems: tuple[FeatureProblem, ...]


def check_features(definitions: FeatureDefinitions, schema: Any) -> FeatureCheck:
    """Check coverage and consistency of definitions against an input schema.

    Raises UnknownFeatureField for a definition of a field the schema lacks: that is an error in
    the definitions file, not a finding about the model.
    """
    fields = schema_fields(schema)
    by_path = {field.path: field for field in fields}
    for definition in definitions.definitions:
        if definition.path not in by_path:
            known = ", ".join(sorted(by_path)) or "none"
            raise UnknownFeatureField(
                f"the input schema has no field {definition.path!r} (its leaf fields: {known})",
                place=definition.place or definition.path)
    problems: list[FeatureProblem] = []
    missing = tuple(field.path for field in fields if definitions.get(field.path) is None)
    for path in missing:
        problems.append(FeatureProblem(path, "missing-definition",
                                       "this leaf field of the input schema has no definition"))
    for field in fields:
        defined = definitions.get(field.path)
        if defined is not None:
            problems.extend(_consistency(defined, field))
    return FeatureCheck(passed=not problems, fields=len(fields),
                        defined=len(fields) - len(missing), missing=missing,
                        problems=tuple(problems))


def _consistency(definition: Any, field: SchemaField) -> list[FeatureProblem]:
    problems: list[FeatureProblem] = []

    def problem(rule: str, message: str) -> None:
        problems.append(FeatureProblem(field.path, rule, message))

    if definition.nullable and not field.nullable:
        problem("nullability", "defined as nullable, but the schema's type is not a union "
                "with null")
    if field.nullable and not definition.nullable:
        problem("nullability", "the schema allows null (a union with null), but the "
                "definition does not say nullable = true")

    if field.is_numeric and definition.unit is None:
        problem("unit-vs-type", f"a {field.numeric_type or field.type} field needs a unit "
                "(UCUM; \"1\" for a pure number, \"{count}\" for a count)")
    if definition.unit is not None and not field.is_numeric:
        problem("unit-vs-type", f"a unit ({definition.unit}) is given, but the field is "
                f"{field.type}, not a number")

    domain = definition.domain
    if isinstance(domain, NumericRange):
        problems.extend(_range_problems(domain, field))
    elif isinstance(domain, Categories):
        problems.extend(_category_problems(domain, field))
    return problems


def _range_problems(domain: NumericRange, field: SchemaField) -> list[FeatureProblem]:
    numeric = field.numeric_type
    if not field.is_numeric or numeric is None:
        return [FeatureProblem(field.path, "domain-vs-type",
                               f"a numeric range is given, but the field is {field.type}")]
    if numeric in INTEGER_LIMITS:
        low, high = INTEGER_LIMITS[numeric]
        # An infinite bound means "unbounded on that side"; only finite bounds must fit.
        if (math.isfinite(domain.minimum) and domain.minimum < low) or (
                math.isfinite(domain.maximum) and domain.maximum > high):
            return [FeatureProblem(field.path, "domain-vs-type",
                                   f"range [{domain.minimum}, {domain.maximum}] does not fit "
                                   f"in {numeric} ([{low}, {high}])")]
        if math.isfinite(domain.minimum) and math.isfinite(domain.maximum) and \
                math.ceil(domain.minimum) > math.floor(domain.maximum):
            return [FeatureProblem(field.path, "domain-vs-type",
                                   f"range [{domain.minimum}, {domain.maximum}] holds no "
                                   f"{numeric} value")]
    finite_bounds = [abs(bound) for bound in (domain.minimum, domain.maximum)
                     if math.isfinite(bound)]
    if numeric == "float" and finite_bounds and max(finite_bounds) > FLOAT_LIMIT:
        return [FeatureProblem(field.path, "domain-vs-type",
                               f"range [{domain.minimum}, {domain.maximum}] exceeds the "
                               "largest float")]
    return []


def _category_problems(domain: Categories, field: SchemaField) -> list[FeatureProblem]:
    values = domain.values
    if field.type == "enum":
        if not all(isinstance(value, str) for value in values):
            return [FeatureProblem(field.path, "categories-vs-symbols",
                                   "categories of an enum field are its symbols, as text")]
        unknown = [value for value in values if value not in field.symbols]
        unlisted = [symbol for symbol in field.symbols if symbol not in values]
        problems = []
        if unknown:
            problems.append(FeatureProblem(
                field.path, "categories-vs-symbols",
                f"categories {', '.join(map(str, unknown))} are not symbols of the enum "
                f"({', '.join(field.symbols)})"))
        if unlisted:
            problems.append(FeatureProblem(
                field.path, "categories-vs-symbols",
                f"enum symbols {', '.join(unlisted)} have no category in the definition"))
        return problems
    if field.type == "string" or field.item_type == "string":
        if not all(isinstance(value, str) for value in values):
            return [FeatureProblem(field.path, "domain-vs-type",
                                   "categories of a string field must be text")]
        return []
    numeric = field.numeric_type
    if numeric in INTEGER_LIMITS:
        integers = [value for value in values if isinstance(value, int)]
        if len(integers) != len(values):
            return [FeatureProblem(field.path, "domain-vs-type",
                                   f"categories of an {numeric} field must be integers")]
        low, high = INTEGER_LIMITS[numeric]
        outside = [value for value in integers if not low <= value <= high]
        if outside:
            return [FeatureProblem(field.path, "domain-vs-type",
                                   f"categories {', '.join(map(str, outside))} do not fit in "
                                   f"{numeric}")]
        return []
    return [FeatureProblem(field.path, "domain-vs-type",
                           f"categories are given, but a {field.type} field cannot be "
                           "categorical (use an enum, a string or an integer type)")]
