"""A structural diff of two schemas, each change classed by who it breaks.

"breaking-for-readers": a reader moved to the new schema can no longer read data written with
the old one (not backward compatible). "breaking-for-writers": data written with the new schema
can no longer be read by readers still on the old one (not forward compatible). A change that
breaks both is listed once for each; everything else is "safe". Classes follow `resolve`.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from typing import Any, Literal

from registry.schema.model import (
    Array,
    Enum,
    Field,
    Fixed,
    Map,
    NamedSchema,
    Primitive,
    Record,
    Schema,
    Union,
    branch_label,
)
from registry.schema.resolution import first_matching_branch, names_match, resolve

Classification = Literal["safe", "breaking-for-readers", "breaking-for-writers"]


@dataclass(frozen=True)
class Change:
    """One difference; `path` points into the new schema (into the old one for a removal)."""

    path: str
    kind: str
    message: str
    classification: Classification


@dataclass(frozen=True)
class SchemaDiff:
    changes: tuple[Change, ...] = ()

    @property
    def breaks_readers(self) -> bool:
        return any(c.classification == "breaking-for-readers" for c in self.changes)

    @property
    def breaks_writers(self) -> bool:
        return any(c.classification == "breaking-for-writers" for c in self.changes)


def _describe_default(field: Field) -> str:
    return json.dumps(field.default) if field.has_default else "none"


class _Differ:
    def __init__(self) -> None:
        self.changes: list[Change] = []
        self.current = self.changes  # where change() puts what it finds
        # Which directions the current comparison speaks for: under a renamed field that only one
        # side links by an alias, the other side reads a default and the types do not matter.
        self.mask = (True, True)
        self.visited: set[tuple[int, int, tuple[bool, bool]]] = set()

    def change(self, path: str, kind: str, message: str, breaks_readers: bool = False,
               breaks_writers: bool = False) -> None:
        path = path or "/"
        breaks_readers = breaks_readers and self.mask[0]
        breaks_writers = breaks_writers and self.mask[1]
        if breaks_readers:
            self.current.append(Change(path, kind, message + " (new readers cannot read old "
                                       "data)", "breaking-for-readers"))
        if breaks_writers:
            self.current.append(Change(path, kind, message + " (old readers cannot read new "
                                       "data)", "breaking-for-writers"))
        if not breaks_readers and not breaks_writers:
            self.current.append(Change(path, kind, message, "safe"))

    def by_resolution(self, path: str, kind: str, message: str, old: Schema, new: Schema) -> None:
        self.change(path, kind, message, breaks_readers=not resolve(new, old).compatible,
                    breaks_writers=not resolve(old, new).compatible)

    def run(self, old: Schema, new: Schema) -> SchemaDiff:
        # Items: (old, new, path, mask) to compare, or ("emit", changes) found earlier in
        # document order. Children may leave out the mask to inherit their parent's.
        stack: list[tuple] = [(old, new, "", (True, True))]
        while stack:
            item = stack.pop()
            if len(item) == 2:
                self.changes.extend(item[1])
                continue
            o, n, path, self.mask = item
            if o is n:
                continue  # the very same schema object: nothing changed
            children: list[tuple] = []
            if isinstance(o, Union) and isinstance(n, Union):
                self._unions(o, n, path, children)
            elif isinstance(o, Union) or isinstance(n, Union) or o.kind != n.kind:
                self.by_resolution(path, "type-changed",
                                   f"type changed from {o.describe()} to {n.describe()}", o, n)
            elif isinstance(o, Array) and isinstance(n, Array):
                children.append((o.items, n.items, f"{path}/items"))
            elif isinstance(o, Map) and isinstance(n, Map):
                children.append((o.values, n.values, f"{path}/values"))
            elif isinstance(o, NamedSchema) and isinstance(n, NamedSchema):
                if (id(o), id(n), self.mask) not in self.visited:
                    self.visited.add((id(o), id(n), self.mask))
                    self._named(o, n, path, children)
            elif isinstance(o, Primitive):
                self._logical(o, n, path)
            for child in reversed(children):
                stack.append(child if len(child) in (2, 4) else (*child, self.mask))
        return SchemaDiff(tuple(self.changes))

    def _logical(self, o: Schema, n: Schema, path: str) -> None:
        if o.logical != n.logical:
            before = o.logical.name if o.logical else "none"
            after = n.logical.name if n.logical else "none"
            self.by_resolution(path, "logical-type-changed",
                               f"logical type changed from {before} to {after}; values would "
                               "be read differently", o, n)

    def _unions(self, o: Union, n: Union, path: str,
                children: list[tuple[Any, ...]]) -> None:
        def key(schema: Schema) -> str:
            return schema.simple_name if isinstance(schema, NamedSchema) else schema.kind

        old_keys = {key(b): i for i, b in enumerate(o.branches)}
        new_keys = {key(b): i for i, b in enumerate(n.branches)}
        for i, branch in enumerate(n.branches):
            if key(branch) in old_keys:
                children.append((o.branches[old_keys[key(branch)]], branch, f"{path}/{i}"))
            else:
                self.change(f"{path}/{i}", "union-branch-added",
                            f"union branch {branch_label(branch)} added",
                            breaks_writers=first_matching_branch(o, branch) is None)
        for branch in o.branches:
            if key(branch) not in new_keys:
                self.change(path, "union-branch-removed",
                            f"union branch {branch_label(branch)} removed",
                            breaks_readers=first_matching_branch(n, branch) is None)

    def _named(self, o: NamedSchema, n: NamedSchema, path: str,
               children: list[tuple[Any, ...]]) -> None:
        if o.name != n.name:
            self.change(path, "renamed", f"{o.kind} {o.name} renamed to {n.name}",
                        breaks_readers=not names_match(n, o), breaks_writers=not names_match(o, n))
        if set(o.aliases) != set(n.aliases):
            self.change(path, "aliases-changed", f"aliases of {n.name} changed from "
                        f"{list(o.aliases)} to {list(n.aliases)}")
        if isinstance(o, Fixed) and isinstance(n, Fixed):
            if o.size != n.size:
                self.change(path, "size-changed", f"size of fixed {n.name} changed from "
                            f"{o.size} to {n.size}", True, True)
            else:
                self._logical(o, n, path)
        elif isinstance(o, Enum) and isinstance(n, Enum):
            self._enums(o, n, path)
        elif isinstance(o, Record) and isinstance(n, Record):
            self._records(o, n, path, children)

    def _enums(self, o: Enum, n: Enum, path: str) -> None:
        for symbol in n.symbols:
            if symbol not in o.symbols:
                self.change(path, "symbol-added", f"enum symbol {symbol} added to {n.name}",
                            breaks_writers=o.default is None)
        for symbol in o.symbols:
            if symbol not in n.symbols:
                self.change(path, "symbol-removed", f"enum symbol {symbol} removed from {n.name}",
                            breaks_readers=n.default is None)
        common_old = [s for s in o.symbols if s in n.symbols]
        common_new = [s for s in n.symbols if s in o.symbols]
        if common_old != common_new:
            self.change(path, "symbols-reordered", f"symbols of {n.name} reordered")
        if o.default != n.default:
            self.change(path, "enum-default-changed", f"enum default of {n.name} changed from "
                        f"{o.default} to {n.default}")

    @staticmethod
    def _renamed_from(o: Record, field: Field, new_names: set[str], matched_old: set[str]
                      ) -> Field | None:
        """The old field a new field renames: named by a new alias, or naming it by an old one."""
        for alias in field.aliases:
            candidate = o.field_named(alias)
            if candidate is not None and candidate.name not in new_names \
                    and candidate.name not in matched_old:
                return candidate
        for candidate in o.fields:
            if field.name in candidate.aliases and candidate.name not in new_names \
                    and candidate.name not in matched_old:
                return candidate
        return None

    def _records(self, o: Record, n: Record, path: str,
                 children: list[tuple[Any, ...]]) -> None:
        new_names = {f.name for f in n.fields}
        matched_old: set[str] = set()
        for field in n.fields:
            field_path = f"{path}/fields/{field.name}"
            found: list[Change] = []
            self.current = found
            children.append(("emit", found))
            before = o.field_named(field.name)
            renamed = False
            if before is None:
                before = self._renamed_from(o, field, new_names, matched_old)
                renamed = before is not None
            if before is None:
                self.change(field_path, "field-added", f"field {field.name} added"
                            + (" with a default" if field.has_default else " without a default"),
                            breaks_readers=not field.has_default)
                self.current = self.changes
                continue
            matched_old.add(before.name)
            if renamed:
                # New readers find the old field through the new field's aliases; old readers
                # find the new field through the old field's aliases; else a default must do.
                readers_find = before.name in field.aliases or field.has_default
                writers_find = field.name in before.aliases or before.has_default
                self.change(field_path, "field-renamed", f"field {before.name} renamed to "
                            f"{field.name}, linked by an alias",
                            breaks_readers=not readers_find, breaks_writers=not writers_find)
            if before.has_default != field.has_default or (
                    before.has_default and before.default != field.default):
                self.change(field_path, "field-default-changed",
                            f"default of field {field.name} changed from "
                            f"{_describe_default(before)} to {_describe_default(field)}")
            if set(before.aliases) != set(field.aliases) and not renamed:
                self.change(field_path, "field-aliases-changed",
                            f"aliases of field {field.name} changed from {list(before.aliases)} "
                            f"to {list(field.aliases)}")
            if before.order != field.order:
                self.change(field_path, "field-order-changed",
                            f"sort order of field {field.name} changed from {before.order} to "
                            f"{field.order}")
            self.current = self.changes
            if renamed:
                mask = (self.mask[0] and before.name in field.aliases,
                        self.mask[1] and field.name in before.aliases)
                if mask != (False, False):
                    children.append((before.type, field.type, f"{field_path}/type", mask))
            else:
                children.append((before.type, field.type, f"{field_path}/type"))
        removed: list[Change] = []
        self.current = removed
        for field in o.fields:
            if field.name not in matched_old:
                self.change(f"{path}/fields/{field.name}", "field-removed",
                            f"field {field.name} removed"
                            + ("" if field.has_default else " (it had no default)"),
                            breaks_writers=not field.has_default)
        self.current = self.changes
        children.append(("emit", removed))


def diff(old: Schema, new: Schema) -> SchemaDiff:
    """Every change from `old` to `new`, in document order, each classed by who it breaks."""
    return _Differ().run(old, new)
