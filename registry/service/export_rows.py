"""The rows of an export folder, checked before any of them is written: each line one JSON
object with no key twice, each value of its column's type, no two rows with one primary key or
unique value, every reference to a row that is there, and every deciding row backed by the
exported audit chain. Each problem names its file and line."""

from __future__ import annotations

import base64
import binascii
import json
from dataclasses import dataclass, field
from datetime import datetime
from typing import Any

from sqlalchemy import BigInteger, Boolean, DateTime, Integer, LargeBinary, String, Table

from registry.service.export_folder import BadExport
from registry.service.row_coverage import ReplayedRows, compare_all, parse_rows
from registry.store import tables as t

LARGEST_INTEGER = 2**31 - 1  # an Integer column is 32-bit on PostgreSQL
LARGEST_BIG_INTEGER = 2**63 - 1  # a BigInteger column is 64-bit


@dataclass
class TableRows:
    """One exported table: its rows as they will be inserted, and the line each came from."""

    file: str
    rows: list[dict[str, Any]] = field(default_factory=list)
    lines: list[int] = field(default_factory=list)

    def place(self, index: int) -> str:
        return f"{self.file} line {self.lines[index]}"


def _no_repeated_keys(pairs: list[tuple[str, Any]]) -> dict[str, Any]:
    record: dict[str, Any] = {}
    for key, value in pairs:
        if key in record:
            raise ValueError(f"the key {key!r} appears twice")
        record[key] = value
    return record


def parse_table(table: Table, file: str, content: bytes) -> TableRows:
    parsed = TableRows(file)
    for number, line in enumerate(content.split(b"\n"), start=1):
        if not line.strip():
            continue
        place = f"{file} line {number}"
        try:
            record = json.loads(line, object_pairs_hook=_no_repeated_keys)
        except ValueError as error:  # JSONDecodeError, UnicodeDecodeError, a repeated key
            raise BadExport(f"not a well-formed JSON object: {error}", place=place) from None
        if not isinstance(record, dict):
            raise BadExport("not a JSON object", place=place)
        parsed.rows.append(_typed_row(table, record, place))
        parsed.lines.append(number)
    return parsed


def _typed_row(table: Table, record: dict[str, Any], place: str) -> dict[str, Any]:
    row = {}
    for name, value in record.items():
        row[name] = _column_value(table, name, value, place)
    for column in table.columns:
        if column.name not in row:
            raise BadExport(f"column {column.name} is missing", place=place)
    return row


def _bytes_value(name: str, value: Any, place: str) -> bytes:
    """Bytes kept in their row (served rows) travel as base64 text (RFC 4648, section 4)."""
    not_base64 = BadExport(f"column {name} is not base64 text", place=place)
    if not isinstance(value, str):
        raise not_base64
    try:
        return base64.b64decode(value, validate=True)
    except binascii.Error:
        raise not_base64 from None


def _column_value(table: Table, name: str, value: Any, place: str) -> Any:
    if name not in table.c:
        raise BadExport(f"unknown column {name!r}", place=place)
    column = table.c[name]
    column_type = column.type
    if value is None:
        if not column.nullable:
            raise BadExport(f"column {name} may not be empty", place=place)
        return None
    if isinstance(column_type, DateTime):
        try:
            return datetime.fromisoformat(value)
        except (TypeError, ValueError):
            raise BadExport(f"column {name} is not a timestamp", place=place) from None
    if isinstance(column_type, Boolean):
        if not isinstance(value, bool):
            raise BadExport(f"column {name} is not true or false", place=place)
        return value
    if isinstance(column_type, Integer):
        bits, largest = (64, LARGEST_BIG_INTEGER) if isinstance(column_type, BigInteger) \
            else (32, LARGEST_INTEGER)
        if not isinstance(value, int) or isinstance(value, bool) or \
                not -largest - 1 <= value <= largest:
            raise BadExport(f"column {name} is not a {bits}-bit integer", place=place)
        return value
    if isinstance(column_type, LargeBinary):
        return _bytes_value(name, value, place)
    if isinstance(column_type, String):  # Text too
        if not isinstance(value, str):
            raise BadExport(f"column {name} is not text", place=place)
        if column_type.length is not None and len(value) > column_type.length:
            raise BadExport(f"column {name} is longer than {column_type.length} characters",
                            place=place)
    return value


def check_keys(tables: dict[str, TableRows]) -> None:
    """No primary key or unique value twice, and every reference to a row that is there, so the
    insert can fail on nothing but the database itself."""
    for table in t.Base.metadata.sorted_tables:
        if table.name not in tables:
            continue  # a blob's pieces travel as its file, checked against its digest
        parsed = tables[table.name]
        for columns, only_if in _unique_sets(table):
            first_seen: dict[tuple[Any, ...], int] = {}
            for index, row in enumerate(parsed.rows):
                if only_if is not None and not row.get(only_if):
                    continue
                value = tuple(row.get(c) for c in columns)
                if None in value and columns != _key(table):
                    continue  # NULLs never collide
                if value in first_seen:
                    described = ", ".join(f"{c}={v}" for c, v in zip(columns, value, strict=True))
                    raise BadExport(f"duplicate key ({described}), first on line "
                                    f"{parsed.lines[first_seen[value]]}",
                                    place=parsed.place(index))
                first_seen[value] = index
        for foreign_key in table.foreign_keys:
            target = foreign_key.column
            present = {row.get(target.name) for row in tables[target.table.name].rows}
            name = foreign_key.parent.name
            for index, row in enumerate(parsed.rows):
                if row.get(name) is not None and row[name] not in present:
                    raise BadExport(f"column {name} refers to {target.table.name} "
                                    f"{target.name}={row[name]}, which the export does not hold",
                                    place=parsed.place(index))


def _key(table: Table) -> tuple[str, ...]:
    return tuple(column.name for column in table.primary_key.columns)


def _unique_sets(table: Table) -> list[tuple[tuple[str, ...], str | None]]:
    """The primary key, unique constraints and unique indexes; a partial unique index on a
    boolean column (`WHERE is_exclusive`) applies only to rows where that column is true."""
    from sqlalchemy import UniqueConstraint

    sets: list[tuple[tuple[str, ...], str | None]] = [(_key(table), None)]
    sets += [((column.name,), None) for column in table.columns if column.unique]
    sets += [(tuple(c.name for c in constraint.columns), None)
             for constraint in table.constraints if isinstance(constraint, UniqueConstraint)]
    for index in table.indexes:
        if not index.unique:
            continue
        where = index.dialect_options["sqlite"].get("where")
        only_if = str(where) if where is not None else None
        if only_if is not None and only_if not in table.c:
            continue  # a condition we cannot evaluate here; the database still enforces it
        sets.append((tuple(c.name for c in index.columns), only_if))
    return sets


def check_backed_by_chain(tables: dict[str, TableRows]) -> None:
    """Replay the exported chain's row digests and refuse the first row it does not back."""
    replayed = ReplayedRows()
    events = tables[t.AuditEvent.__tablename__]
    by_sequence = {}
    for row in events.rows:
        rows = parse_rows(row.get("rows_json"))
        replayed.replay(row["sequence"], rows)
        by_sequence[row["sequence"]] = rows
    if replayed.problems:
        sequence, problem = replayed.problems[0]
        raise BadExport(f"audit event {sequence}: {problem}", place=events.file)
    differences = compare_all(lambda table: tables[table.name].rows, replayed,
                              by_sequence.get,
                              lambda table: tables[table.name].place)
    if differences:
        first = differences[0]
        raise BadExport(f"{first.place}: {first.problem}; the exported audit chain does not "
                        "back it", place=f"tables/{first.table}.jsonl")
