"""The semantic diff of two versions' feature definitions, each change classed for the gates.

Classes: "safe" (nothing a reader of the feed must do), "needs-review" (a person should look),
"breaking" (the same value on the feed now means something else to the model).

Sources and common practice: that a field renamed through an Avro alias still reads the old
field's data is the Avro specification (Aliases); conversion factors come from UCUM through the
units library and are checked against NIST SP 811. How each change is classed is our own rule,
in line with common practice but with no single published source:
  - a unit change between convertible units (kPa to [psi]) is breaking, because the feed's
    numbers are not converted by schema resolution; a respelling of the same unit (m/s, m.s-1)
    is safe; a changed annotation alone ({count} to {repairs}) needs review;
  - a unit change between units of different dimensions is breaking;
  - a numeric range that widens is safe, one that narrows or shifts needs review (the feed may
    carry values the model was not built for); ranges are compared in the new unit;
  - categories added are safe, categories removed are breaking (a value the feed may still send
    has lost its meaning); turning a range into categories or back is breaking;
  - a field that may now be null is safe, one that no longer may be null is breaking;
  - a changed transform or source needs review; a changed description or owner is safe;
  - a changed field type needs review here (whether data stays readable is the schema gate's
    verdict); a feature added is safe, a definition dropped for a field still read needs review.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Literal

from registry.features.definitions import (
    Categories,
    FeatureDefinition,
    FeatureDefinitions,
    NumericRange,
)
from registry.features.fields import SchemaField, schema_fields
from registry.features.rules import UnknownFeatureField
from registry.features.units import compare_units

Severity = Literal["safe", "needs-review", "breaking"]
SEVERITY_ORDER: dict[str, int] = {"safe": 0, "needs-review": 1, "breaking": 2}


@dataclass(frozen=True)
class FeatureChange:
    """One change in meaning of one feature between two versions."""

    path: str  # the field's path in the new version (the old path for a removed feature)
    change: str  # "unit-changed", "domain-narrowed", "renamed" ...
    severity: Severity
    message: str
    old_path: str | None = None
    before: Any = None
    after: Any = None
    factor: float | None = None  # new value = factor * old value + offset, for unit changes
    offset: float | None = None


@dataclass(frozen=True)
class FeatureDiff:
    """Every change between two versions' definitions, and the worst class among them."""

    verdict: Severity
    changes: tuple[FeatureChange, ...]

    @property
    def is_breaking(self) -> bool:
        return self.verdict == "breaking"


def diff_features(old_definitions: FeatureDefinitions, old_schema: Any,
                  new_definitions: FeatureDefinitions, new_schema: Any) -> FeatureDiff:
    """Compare definitions of two versions; the schemas (either may be None) supply aliases.

    A new field whose aliases name an old field at the same level is that old field renamed
    (Avro specification, Aliases), and its definition is compared with the old one.
    """
    old_fields = _fields_by_path(old_schema)
    new_fields = _fields_by_path(new_schema)
    for definitions, fields, schema in ((old_definitions, old_fields, old_schema),
                                        (new_definitions, new_fields, new_schema)):
        if schema is not None:
            _require_fields(definitions, fields)
    changes: list[FeatureChange] = []
    matched_old: set[str] = set()
    for new in new_definitions.definitions:
        old_path = _old_counterpart(new.path, new_fields.get(new.path), old_definitions,
                                    old_fields)
        if old_path is None:
            unit = f" (in {new.unit})" if new.unit else ""
            changes.append(FeatureChange(new.path, "added", "safe", f"a new feature{unit}"))
            continue
        matched_old.add(old_path)
        old = old_definitions.get(old_path)
        assert old is not None
        if old_path != new.path:
            changes.append(FeatureChange(
                new.path, "renamed", "safe",
                f"renamed from {old_path}; its alias lets the new schema read data written "
                "under the old name", old_path=old_path, before=old_path, after=new.path))
        changes.extend(_compare(old, new))
        changes.extend(_compare_types(old_fields.get(old_path), new_fields.get(new.path),
                                      new.path, old_path))
    for old in old_definitions.definitions:
        if old.path in matched_old:
            continue
        in_new_schema = old.path in new_fields
        if in_new_schema:
            changes.append(FeatureChange(old.path, "definition-removed", "needs-review",
                                         "the field is still in the schema but no longer "
                                         "defined", old_path=old.path))
        else:
            changes.append(FeatureChange(old.path, "removed", "safe",
                                         "the feature is no longer read", old_path=old.path))
    verdict: Severity = "safe"
    for change in changes:
        if SEVERITY_ORDER[change.severity] > SEVERITY_ORDER[verdict]:
            verdict = change.severity
    return FeatureDiff(verdict=verdict, changes=tuple(changes))


def _require_fields(definitions: FeatureDefinitions, fields: dict[str, SchemaField]) -> None:
    for definition in definitions.definitions:
        if definition.path not in fields:
            raise UnknownFeatureField(
                f"the input schema has no field {definition.path!r}",
                place=definition.place or definition.path)


def _fields_by_path(schema: Any) -> dict[str, SchemaField]:
    if schema is None:
        return {}
    return {field.path: field for field in schema_fields(schema)}


def _old_counterpart(path: str, new_field: SchemaField | None,
                     old_definitions: FeatureDefinitions,
                     old_fields: dict[str, SchemaField]) -> str | None:
    if old_definitions.get(path) is not None and (not old_fields or path in old_fields):
        return path
    if new_field is None:
        return None
    prefix = f"{new_field.parent}." if new_field.parent else ""
    for alias in new_field.aliases:
        candidate = prefix + alias
        if old_definitions.get(candidate) is not None and (not old_fields
                                                           or candidate in old_fields):
            return candidate
    return None


def _compare(old: FeatureDefinition, new: FeatureDefinition) -> list[FeatureChange]:
    changes: list[FeatureChange] = []
    path, old_path = new.path, old.path

    def change(kind: str, severity: Severity, message: str, before: Any = None,
               after: Any = None, **extra: Any) -> None:
        changes.append(FeatureChange(path, kind, severity, message, old_path=old_path,
                                     before=before, after=after, **extra))

    factor, offset = 1.0, 0.0
    if old.unit != new.unit:
        if old.unit is None:
            change("unit-added", "needs-review", f"now measured in {new.unit}; before, no unit "
                   "was stated", after=new.unit)
        elif new.unit is None:
            change("unit-removed", "needs-review", f"no unit any more; before, {old.unit}",
                   before=old.unit)
        else:
            comparison = compare_units(old.unit, new.unit)
            if not comparison.convertible:
                change("unit-changed", "breaking",
                       f"unit changed from {old.unit} to {new.unit}, which measure different "
                       "things and cannot be converted", before=old.unit, after=new.unit)
            elif comparison.is_same_unit:
                change("unit-respelled", "safe",
                       f"{old.unit} and {new.unit} are the same unit", before=old.unit,
                       after=new.unit)
            elif comparison.factor == 1.0 and not comparison.offset:
                change("unit-annotation-changed", "needs-review",
                       f"{old.unit} and {new.unit} differ only in their annotation: the same "
                       "unit, but perhaps a different thing counted", before=old.unit,
                       after=new.unit)
            else:
                factor, offset = comparison.factor or 1.0, comparison.offset or 0.0
                how = f"{factor:g}" + (f" + {offset:g}" if offset else "")
                change("unit-changed", "breaking",
                       f"unit changed from {old.unit} to {new.unit}: a value in {new.unit} is "
                       f"{how} times the value in {old.unit}, and schema resolution does not "
                       "convert the feed's numbers", before=old.unit, after=new.unit,
                       factor=factor, offset=offset)
    changes.extend(_compare_domains(old, new, factor, offset, change))
    if old.nullable != new.nullable:
        if new.nullable:
            change("nullability-changed", "safe", "may now be null", before=False, after=True)
        else:
            change("nullability-changed", "breaking",
                   "may no longer be null, but the feed may still send null", before=True,
                   after=False)
    if old.transform != new.transform:
        change("transform-changed", "needs-review", "the transform changed",
               before=old.transform, after=new.transform)
    if old.source != new.source:
        change("source-changed", "needs-review", "the source changed",
               before=_source_text(old), after=_source_text(new))
    if old.description != new.description:
        change("description-changed", "safe", "the description changed",
               before=old.description, after=new.description)
    if old.owner != new.owner:
        change("owner-changed", "safe", "the owner changed", before=old.owner,
               after=new.owner)
    return changes


def _compare_types(old: SchemaField | None, new: SchemaField | None, path: str,
                   old_path: str) -> list[FeatureChange]:
    """A field whose type changed: readability is the schema gate's call, meaning is a person's."""
    if old is None or new is None:
        return []
    before = old.item_type and f"{old.type} of {old.item_type}" or old.type
    after = new.item_type and f"{new.type} of {new.item_type}" or new.type
    if before == after:
        return []
    return [FeatureChange(path, "type-changed", "needs-review",
                          f"the field's type changed from {before} to {after}",
                          old_path=old_path, before=before, after=after)]


def _source_text(definition: FeatureDefinition) -> str | None:
    source = definition.source
    return f"{source.dataset}.{source.column}" if source else None


def _range_text(domain: NumericRange) -> list[float]:
    return [domain.minimum, domain.maximum]


def _compare_domains(old: FeatureDefinition, new: FeatureDefinition, factor: float,
                     offset: float, change: Any) -> list[FeatureChange]:
    before, after = old.domain, new.domain
    if before == after and factor == 1.0 and offset == 0.0:
        return []
    if before is None and after is None:
        return []
    if before is None:
        change("domain-added", "needs-review", "a domain is now declared", after=_plain(after))
        return []
    if after is None:
        change("domain-removed", "safe", "no domain is declared any more",
               before=_plain(before))
        return []
    if type(before) is not type(after):
        change("domain-kind-changed", "breaking",
               "the domain changed between a numeric range and categories",
               before=_plain(before), after=_plain(after))
        return []
    if isinstance(before, Categories):
        assert isinstance(after, Categories)
        added = [value for value in after.values if value not in before.values]
        removed = [value for value in before.values if value not in after.values]
        if added:
            change("categories-added", "safe",
                   f"new categories {', '.join(map(str, added))}", after=added)
        if removed:
            change("categories-removed", "breaking",
                   f"categories {', '.join(map(str, removed))} were removed, but the feed may "
                   "still send them", before=removed)
        return []
    assert isinstance(before, NumericRange) and isinstance(after, NumericRange)
    # Compare in the new unit: [0, 1200] kPa is [0, 174.045] psi, not a narrowing.
    ends = sorted(factor * bound + offset for bound in (before.minimum, before.maximum))
    converted = NumericRange(ends[0], ends[1])
    if _close(converted, after):
        return []
    if after.contains(converted):
        change("domain-widened", "safe", "the numeric range widened",
               before=_range_text(converted), after=_range_text(after))
    elif converted.contains(after):
        change("domain-narrowed", "needs-review",
               "the numeric range narrowed: the feed may carry values outside it",
               before=_range_text(converted), after=_range_text(after))
    else:
        change("domain-shifted", "needs-review", "the numeric range moved",
               before=_range_text(converted), after=_range_text(after))
    return []


def _close(a: NumericRange, b: NumericRange) -> bool:
    """Equal up to the rounding a unit conversion leaves (a relative 1e-9)."""
    def near(x: float, y: float) -> bool:
        return x == y or abs(x - y) <= 1e-9 * max(abs(x), abs(y))
    return near(a.minimum, b.minimum) and near(a.maximum, b.maximum)


def _plain(domain: Any) -> Any:
    if isinstance(domain, NumericRange):
        return {"range": _range_text(domain)}
    if isinstance(domain, Categories):
        return {"categories": list(domain.values)}
    return None
