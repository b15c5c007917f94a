"""Replaying the audit chain's row digests and comparing them with the rows as they stand.

Each event that closed a transaction lists the deciding rows it wrote: their table, primary key
and column digests, or that they were deleted. Replayed in order, the events say what every
covered row must hold now; any row that differs, that no event wrote, or that an event wrote and
is gone, is a difference naming its table, key and (where one column differs) that column.
Used by `audit verify` on a catalogue and by `import` on an export folder.
"""

from __future__ import annotations

import json
from collections.abc import Callable, Iterable, Mapping
from dataclasses import dataclass
from typing import Any

from sqlalchemy import Table

from registry.store.row_digests import (
    column_digests,
    covered_tables,
    is_covered,
    key_columns,
    key_of,
    row_digest,
)

RowKey = tuple[Any, ...]


@dataclass(frozen=True)
class RowDifference:
    table: str
    key: dict[str, Any]
    column: str | None
    problem: str

    @property
    def place(self) -> str:
        key = ", ".join(f"{name}={value}" for name, value in self.key.items())
        return f"{self.table} ({key})" + (f" column {self.column}" if self.column else "")


class ReplayedRows:
    """What the chain says each covered row holds now: the event that last wrote it and the
    digest of the row it recorded (None: deleted). Row digests only, to keep memory small on
    long chains; the columns are looked up again for the rare row that differs."""

    def __init__(self) -> None:
        self.rows: dict[tuple[str, RowKey], tuple[int, str | None]] = {}
        self.problems: list[tuple[int, str]] = []  # (event, what is wrong with its row list)

    def replay(self, sequence: int, rows: Any) -> None:
        if rows is None:
            return
        if not isinstance(rows, list):
            self.problems.append((sequence, "its row digests are not a list"))
            return
        for entry in rows:
            try:
                table, key = entry["table"], tuple(entry["key"])
                digest = None if entry.get("deleted") else row_digest(entry["columns"])
            except (KeyError, TypeError, AttributeError):
                self.problems.append((sequence, "one of its row digests is malformed"))
                continue
            self.rows[(table, key)] = (sequence, digest)


def parse_rows(rows_json: str | None) -> Any:
    if rows_json is None:
        return None
    try:
        return json.loads(rows_json)
    except json.JSONDecodeError:
        return {"unreadable": rows_json}


def recorded_columns(rows: Any, table: str, key: RowKey) -> dict[str, str]:
    """The column digests one event recorded for one row."""
    for entry in rows if isinstance(rows, list) else []:
        if isinstance(entry, dict) and entry.get("table") == table and \
                tuple(entry.get("key") or ()) == key and isinstance(entry.get("columns"), dict):
            return entry["columns"]
    return {}


def first_column_differing(table: Table, recorded: Mapping[str, str],
                           current: Mapping[str, str]) -> str | None:
    for column in table.columns:
        if recorded.get(column.name) != current.get(column.name):
            return column.name
    return None


def _key_dict(table: Table, key: RowKey) -> dict[str, Any]:
    # the key may come from an audit event's row list, which nothing forces to the right length
    return dict(zip(key_columns(table), key, strict=False))


def compare_table(table: Table, stored_rows: Iterable[Mapping[str, Any]],
                  replayed: ReplayedRows, rows_of_event: Callable[[int], Any],
                  seen: set[tuple[str, RowKey]], where: Callable[[int], str] | None = None
                  ) -> list[RowDifference]:
    """Every stored row of one table against the replayed chain. `where(i)` names the i-th
    stored row's origin (an export's file and line) when there is one."""
    differences = []
    for index, stored in enumerate(stored_rows):
        key = key_of(table, stored)
        origin = f" ({where(index)})" if where else ""
        seen.add((table.name, key))
        expected = replayed.rows.get((table.name, key))
        current = column_digests(table, stored)
        if expected is None or expected[1] is None:
            problem = ("no audit event wrote this row" if expected is None
                       else f"audit event {expected[0]} deleted this row")
            differences.append(RowDifference(table.name, _key_dict(table, key), None,
                                             problem + origin))
            continue
        sequence, digest = expected
        if row_digest(current) == digest:
            continue
        recorded = recorded_columns(rows_of_event(sequence), table.name, key)
        column = first_column_differing(table, recorded, current)
        differences.append(RowDifference(
            table.name, _key_dict(table, key), column,
            f"differs from what audit event {sequence} recorded{origin}"))
    return differences


def missing_rows(replayed: ReplayedRows, seen: set[tuple[str, RowKey]]) -> list[RowDifference]:
    """Rows the chain says exist that are not stored: deleted behind the log's back."""
    from registry.store import tables as t

    differences = []
    for (table_name, key), (sequence, digest) in replayed.rows.items():
        if digest is None or (table_name, key) in seen:
            continue
        if not is_covered(table_name):
            differences.append(RowDifference(table_name, {"key": list(key)}, None,
                                             f"audit event {sequence} names an unknown table"))
            continue
        table = t.Base.metadata.tables[table_name]
        differences.append(RowDifference(table_name, _key_dict(table, key), None,
                                         f"audit event {sequence} wrote this row and it is "
                                         "gone"))
    return differences


def compare_all(stored: Callable[[Table], Iterable[Mapping[str, Any]]], replayed: ReplayedRows,
                rows_of_event: Callable[[int], Any],
                where: Callable[[Table], Callable[[int], str]] | None = None
                ) -> list[RowDifference]:
    """Every covered table, parents first, then the rows that are gone."""
    seen: set[tuple[str, RowKey]] = set()
    differences: list[RowDifference] = []
    for table in covered_tables():
        differences += compare_table(table, stored(table), replayed, rows_of_event, seen,
                                     where(table) if where else None)
    return differences + missing_rows(replayed, seen)
