"""Whole tables read and written as rows, for export and import of a catalogue."""

from __future__ import annotations

from collections.abc import Iterator, Sequence
from typing import Any

from sqlalchemy import Row, Table, delete, func, select, text
from sqlalchemy.orm import Session

from registry.store import tables as t


def catalogue_tables() -> list[Table]:
    """Every catalogue table in foreign-key order, parents before children; a blob's pieces
    travel as the one file blobs/<digest> (registry/store/blob_store.py), not as rows."""
    return [table for table in t.Base.metadata.sorted_tables
            if table.name != t.BlobChunk.__tablename__]


class TableCopy:
    def __init__(self, session: Session, dialect: str) -> None:
        self._session = session
        self._dialect = dialect

    def begin_snapshot(self) -> None:
        """Make every read of this transaction see one snapshot of the catalogue."""
        if self._dialect == "postgresql":
            # Must be the transaction's first statement; REPEATABLE READ gives one snapshot.
            self._session.execute(
                text("SET TRANSACTION ISOLATION LEVEL REPEATABLE READ READ ONLY"))
        # SQLite (WAL): a read transaction sees the snapshot of its first read.

    def rows(self, table: Table) -> Iterator[Row[Any]]:
        """Every row of a table in primary-key order."""
        yield from self._session.execute(select(table).order_by(*table.primary_key.columns))

    def count(self, table: Table) -> int:
        return self._session.execute(select(func.count()).select_from(table)).scalar_one()

    def clear_audit_head(self) -> None:
        """Drop the blank head a writing transaction may have made, before a chain is imported
        (the imported chain brings its own head)."""
        self._session.execute(delete(t.AuditHead))

    def insert(self, table: Table, rows: list[dict[str, Any]]) -> None:
        self._session.execute(table.insert(), rows)

    def reset_id_counters(self, tables: Sequence[Table]) -> None:
        """PostgreSQL keeps id counters apart from the rows; move them past the imported ids."""
        if self._dialect != "postgresql":
            return
        for table in tables:
            keys = list(table.primary_key.columns)
            if len(keys) != 1 or keys[0].autoincrement is False or keys[0].name != "id":
                continue
            sequence = self._session.execute(
                text("SELECT pg_get_serial_sequence(:table, 'id')"), {"table": table.name}
            ).scalar_one()
            if sequence:
                self._session.execute(text(
                    f"SELECT setval('{sequence}', COALESCE((SELECT max(id) FROM {table.name}), "
                    "0) + 1, false)"))
