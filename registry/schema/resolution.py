"""Schema Resolution: can data written with one schema be read with another, and where not.

Apache Avro Specification 1.11/1.12, Schema Resolution, Aliases and Logical Types. The check is
static and for all data: a writer union into a reader is compatible only when every writer branch
resolves. The walk uses an explicit stack and visits each pair of named types once, so recursive
and deeply nested schemas terminate without touching Python's recursion limit.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, replace
from functools import partial
from typing import Literal

from registry.schema.model import (
    Array,
    Enum,
    Fixed,
    Map,
    NamedSchema,
    Primitive,
    Record,
    Schema,
    Union,
    branch_label,
)

# Avro specification, Schema Resolution: the writer's schema may be promoted to the reader's.
PROMOTIONS = {
    "int": ("long", "float", "double"),
    "long": ("float", "double"),
    "float": ("double",),
    "string": ("bytes",),
    "bytes": ("string",),
}
# Promotions that may round: float has a 24-bit significand, double a 53-bit one.
LOSSY_PROMOTIONS = {("int", "float"), ("long", "float"), ("long", "double")}
# bytes read as string must hold UTF-8; other bytes fail when read.
CONDITIONAL_PROMOTIONS = {("bytes", "string"): " (bytes that are not UTF-8 cannot be read)"}


@dataclass(frozen=True)
class Problem:
    """Why some written data cannot be read; `path` points into the reader schema."""

    path: str
    rule: str
    message: str
    writer_path: str
    witness: dict | None = None
    direction: str = ""  # set by check_both: "backward" or "forward"


@dataclass(frozen=True)
class Note:
    """A safe difference worth knowing (a promotion, a default used), or a warning."""

    path: str
    rule: str
    message: str
    severity: Literal["info", "warning"] = "info"
    direction: str = ""  # set by check_both: "backward" or "forward"


@dataclass(frozen=True)
class Resolution:
    compatible: bool
    problems: tuple[Problem, ...] = ()
    notes: tuple[Note, ...] = ()


def names_match(reader: NamedSchema, writer: NamedSchema) -> bool:
    """Unqualified names equal, or the writer's name among the reader's aliases (Aliases)."""
    if reader.simple_name == writer.simple_name or writer.name in reader.aliases:
        return True
    # An alias written unqualified takes the reader's namespace; it names the writer's
    # unqualified name, matched as names are.
    own = reader.namespace
    return any(alias.rpartition(".")[0] == own and alias.rpartition(".")[2] == writer.simple_name
               for alias in reader.aliases)


def matches(reader: Schema, writer: Schema) -> bool:
    """The specification's shallow match of two non-union schemas (kind, name, promotion)."""
    if reader.__class__ is Primitive and writer.__class__ is Primitive:
        return reader.kind == writer.kind or reader.kind in PROMOTIONS.get(writer.kind, ())
    if isinstance(reader, Array):
        return isinstance(writer, Array)
    if isinstance(reader, Map):
        return isinstance(writer, Map)
    if isinstance(reader, NamedSchema) and isinstance(writer, NamedSchema):
        return reader.kind == writer.kind and names_match(reader, writer)
    return False


def first_matching_branch(reader: Union, writer: Schema) -> int | None:
    """Avro specification, Schema Resolution: the first reader branch that matches the writer."""
    for position, branch in enumerate(reader.branches):
        if matches(branch, writer):
            return position
    return None


def _logical_label(schema: Schema) -> str:
    logical = schema.logical
    if logical is None:
        return "no logical type"
    if logical.name == "decimal":
        return f"decimal({logical.precision},{logical.scale})"
    return logical.name


class _Resolver:
    def __init__(self) -> None:
        self.problems: list[Problem] = []
        self.notes: list[Note] = []
        self.visited_pairs: set[tuple[int, int]] = set()
        self.noted_ignored: set[int] = set()

    def problem(self, path: str, rule: str, message: str, writer_path: str,
                witness: dict | None = None) -> None:
        if witness is None and writer_path.endswith("/type"):
            # A fault in the type of one writer field: name that field.
            head, _, field_name = writer_path[:-len("/type")].rpartition("/")
            if head.endswith("/fields"):
                witness = {"writer_field": field_name}
        self.problems.append(Problem(path or "/", rule, message, writer_path or "/", witness))

    def note(self, path: str, rule: str, message: str,
             severity: Literal["info", "warning"] = "info") -> None:
        self.notes.append(Note(path or "/", rule, message, severity))

    def run(self, reader: Schema, writer: Schema) -> Resolution:
        # Items: (reader, writer, reader path, writer path), or ("emit", deferred finding).
        stack: list[tuple] = [(reader, writer, "", "")]
        while stack:
            item = stack.pop()
            if len(item) == 2:  # ("emit", finding): deferred to keep document order
                item[1]()
                continue
            r, w, rpath, wpath = item
            if r is w:
                # The very same schema object (shared primitives, types from one Names) reads
                # itself with nothing to report.
                continue
            children: list[tuple] = []
            if r.ignored_logical is not None:
                self._note_ignored_logical(r, rpath, "reader", rpath)
            if w.ignored_logical is not None:
                self._note_ignored_logical(w, rpath, "writer", wpath)
            if isinstance(w, Union):
                self._writer_union(r, w, rpath, wpath, children)
            elif isinstance(r, Union):
                position = first_matching_branch(r, w)
                if position is None:
                    self.problem(rpath, "no-matching-branch",
                                 f"no branch of the reader's {r.describe()} matches the writer's "
                                 f"{w.describe()}", wpath)
                else:
                    children.append((r.branches[position], w, f"{rpath}/{position}", wpath))
            elif not matches(r, w):
                self._mismatch(r, w, rpath, wpath)
            elif isinstance(r, NamedSchema):
                pair = (id(r), id(w))
                if pair not in self.visited_pairs:
                    self.visited_pairs.add(pair)
                    self._named(r, w, rpath, wpath, children)
            elif isinstance(r, Array) and isinstance(w, Array):
                children.append((r.items, w.items, f"{rpath}/items", f"{wpath}/items"))
            elif isinstance(r, Map) and isinstance(w, Map):
                children.append((r.values, w.values, f"{rpath}/values", f"{wpath}/values"))
            else:
                self._primitive(r, w, rpath, wpath)
            stack.extend(reversed(children))
        return Resolution(compatible=not self.problems, problems=tuple(self.problems),
                          notes=tuple(self.notes))

    def _note_ignored_logical(self, schema: Schema, rpath: str, role: str, own_path: str
                              ) -> None:
        ignored = schema.ignored_logical
        if ignored is not None and id(schema) not in self.noted_ignored:
            self.noted_ignored.add(id(schema))
            where = f" at {own_path or '/'}" if role == "writer" else ""
            self.note(rpath, "logical-type-ignored",
                      f"the {role}'s logical type {ignored.name}{where} is ignored "
                      f"({ignored.reason}); its underlying {schema.kind} is used", "warning")

    def _writer_union(self, r: Schema, w: Union, rpath: str, wpath: str,
                      children: list[tuple]) -> None:
        """A writer union: every branch the writer may pick must be readable."""
        if isinstance(r, Union) and r.branches == w.branches:
            return  # the same branch objects in the same order (tuples compare by identity here)
        for position, branch in enumerate(w.branches):
            branch_path = f"{wpath}/{position}"
            label = branch_label(branch)
            if isinstance(r, Union):
                chosen = first_matching_branch(r, branch)
                if chosen is None:
                    self.problem(rpath, "union-branch-unreadable",
                                 f"the writer's union branch {label} matches no branch of the "
                                 f"reader's {r.describe()}", branch_path, {"union_branch": label})
                else:
                    children.append((r.branches[chosen], branch, f"{rpath}/{chosen}",
                                     branch_path))
            elif matches(r, branch):
                children.append((r, branch, rpath, branch_path))
            else:
                self.problem(rpath, "union-branch-unreadable",
                             f"the writer's union branch {label} cannot be read as the reader's "
                             f"{r.describe()}", branch_path, {"union_branch": label})

    def _mismatch(self, r: Schema, w: Schema, rpath: str, wpath: str) -> None:
        if isinstance(r, NamedSchema) and isinstance(w, NamedSchema) and r.kind == w.kind:
            self.problem(rpath, "name-mismatch",
                         f"the reader's {r.kind} {r.name} does not match the writer's {w.name} "
                         "(names differ and no reader alias names it)", wpath)
        else:
            self.problem(rpath, "type-mismatch",
                         f"the writer's {w.describe()} cannot be read as {r.describe()}", wpath)

    def _named(self, r: NamedSchema, w: NamedSchema, rpath: str, wpath: str,
               children: list[tuple]) -> None:
        if r.simple_name != w.simple_name:
            self.note(rpath, "alias-used", f"the reader's {r.kind} {r.name} reads the writer's "
                      f"{w.name} through an alias")
        if isinstance(r, Record) and isinstance(w, Record):
            self._record(r, w, rpath, wpath, children)
        elif isinstance(r, Enum) and isinstance(w, Enum):
            self._enum(r, w, rpath, wpath)
        elif isinstance(r, Fixed) and isinstance(w, Fixed):
            if r.size != w.size:
                self.problem(rpath, "fixed-size", f"the reader's fixed {r.name} has {r.size} "
                             f"bytes, the writer's {w.name} has {w.size}", wpath)
            else:
                self._logical(r, w, rpath, wpath)

    def _record(self, r: Record, w: Record, rpath: str, wpath: str,
                children: list[tuple]) -> None:
        """Avro specification, Schema Resolution, records: fields match by name or reader alias."""
        reader_names = r.fields_by_name()
        writer_fields = w.fields_by_name()
        used: set[str] = set()
        for field in r.fields:
            source = writer_fields.get(field.name)
            if source is not None and source.type is field.type:
                used.add(source.name)  # the same type object: nothing to resolve
                continue
            field_path = f"{rpath}/fields/{field.name}"
            if source is None:
                for alias in field.aliases:
                    # A writer field that has a reader field of its own name goes to that field.
                    candidate = writer_fields.get(alias)
                    if candidate is not None and candidate.name not in reader_names \
                            and candidate.name not in used:
                        source = candidate
                        children.append(("emit", partial(
                            self.note, field_path, "field-alias-used",
                            f"reader field {field.name} reads writer field {alias} through its "
                            "alias")))
                        break
            if source is not None:
                used.add(source.name)
                if source.type is not field.type:
                    children.append((field.type, source.type, f"{field_path}/type",
                                     f"{wpath}/fields/{source.name}/type"))
            elif field.has_default:
                children.append(("emit", partial(
                    self.note, field_path, "default-used",
                    f"the writer has no field {field.name}; the reader's default is used")))
            else:
                children.append(("emit", partial(
                    self.problem, field_path, "missing-field",
                    f"the writer has no field {field.name} and the reader's field has no "
                    "default", wpath, {"reader_field": field.name})))
        for field in w.fields if len(used) < len(w.fields) else ():
            if field.name not in used:
                children.append(("emit", partial(
                    self.note, rpath, "writer-field-ignored",
                    f"the writer's field {field.name} is not read and is skipped")))

    def _enum(self, r: Enum, w: Enum, rpath: str, wpath: str) -> None:
        """Avro specification, Schema Resolution, enums: unknown writer symbols need a default."""
        known = set(r.symbols)
        for symbol in w.symbols:
            if symbol in known:
                continue
            if r.default is not None:
                self.note(rpath, "enum-default-used",
                          f"the writer's symbol {symbol} is unknown to the reader and is read as "
                          f"its default {r.default}", "warning")
            else:
                self.problem(rpath, "enum-symbol", f"the writer's symbol {symbol} is not a "
                             f"symbol of the reader's enum {r.name}, which has no default",
                             wpath, {"enum_symbol": symbol})

    def _primitive(self, r: Schema, w: Schema, rpath: str, wpath: str) -> None:
        if r.kind != w.kind:
            lossy = (w.kind, r.kind) in LOSSY_PROMOTIONS
            condition = CONDITIONAL_PROMOTIONS.get((w.kind, r.kind), "")
            self.note(rpath, "promotion",
                      f"the writer's {w.kind} is promoted to {r.kind}"
                      + (" (large values may be rounded)" if lossy else condition),
                      "warning" if lossy or condition else "info")
        self._logical(r, w, rpath, wpath)

    def _logical(self, r: Schema, w: Schema, rpath: str, wpath: str) -> None:
        """Avro specification, Logical Types: decimals match only with equal precision, scale."""
        if r.logical == w.logical:
            return
        rl, wl = r.logical, w.logical
        if rl is not None and wl is not None and rl.name == wl.name == "decimal":
            self.problem(rpath, "decimal-mismatch", f"the reader's {_logical_label(r)} does not "
                         f"match the writer's {_logical_label(w)}", wpath)
            return
        self.note(rpath, "logical-type-change",
                  f"the writer's {_logical_label(w)} is read as {_logical_label(r)} on the same "
                  f"underlying type; values would be misread", "warning")


def resolution_document(resolution: Resolution) -> dict:
    """The JSON of `lockkeeper schema check --json` (DESIGN.md): the CLI's and the API's."""
    return {
        "compatible": resolution.compatible,
        "problems": [{"path": p.path, "rule": p.rule, "message": p.message,
                      "writer_path": p.writer_path, "witness": p.witness}
                     for p in resolution.problems],
        "notes": [{"path": n.path, "rule": n.rule, "message": n.message, "severity": n.severity}
                  for n in resolution.notes],
    }


def resolve(reader: Schema, writer: Schema) -> Resolution:
    """Can every datum written with `writer` be read with `reader`? Every problem, with notes."""
    return _Resolver().run(reader, writer)


def reads(reader: Schema, writer: Schema) -> Resolution:
    """`reader` reads data written with `writer` (an alias of `resolve`)."""
    return resolve(reader, writer)


def check_backward(new: Schema, old: Schema) -> Resolution:
    """Backward compatible: the new schema reads data written with the old one."""
    return resolve(new, old)


def check_forward(new: Schema, old: Schema) -> Resolution:
    """Forward compatible: the old schema reads data written with the new one."""
    return resolve(old, new)


def check_both(new: Schema, old: Schema) -> Resolution:
    """Both directions; each problem names its direction, its path that direction's reader."""
    backward, forward = check_backward(new, old), check_forward(new, old)
    problems = tuple(replace(p, direction="backward") for p in backward.problems) + tuple(
        replace(p, direction="forward") for p in forward.problems)
    notes = tuple(replace(n, direction="backward") for n in backward.notes) + tuple(
        replace(n, direction="forward") for n in forward.notes)
    return Resolution(compatible=backward.compatible and forward.compatible, problems=problems,
                      notes=notes)


def check_against_all(reader: Schema, writers: Sequence[Schema]) -> tuple[Resolution, ...]:
    """One resolution per writer: can `reader` read what each of them wrote?"""
    return tuple(resolve(reader, writer) for writer in writers)
