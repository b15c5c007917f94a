"""Which deciding rows a transaction wrote, so the event that closes it can carry their digests.

The unit of work's session reports every row it inserts, updates or deletes after each flush;
at commit the rows are read back as stored and digested. A bulk UPDATE or DELETE of a covered
table would slip past the session's bookkeeping, so it is refused outright.
"""

from __future__ import annotations

from typing import Any

from sqlalchemy import event, inspect
from sqlalchemy.orm import ORMExecuteState, Session

from registry.store import tables as t
from registry.store.row_digests import (
    EARLY_DIGEST_BYTES,
    EarlyDigests,
    column_digests,
    is_covered,
    key_of,
    plain_value,
    read_row,
)


class UncoveredWrite(RuntimeError):
    """A programming error: a write the audit chain would not cover."""


class RowCapture:
    def __init__(self, session: Session) -> None:
        self._session = session
        # (table name, primary key values) in the order first written
        self.touched: dict[tuple[str, tuple[Any, ...]], None] = {}
        self.allow_bulk = False  # only an import, whose rows its own chain backs, sets this
        self.early = EarlyDigests()
        event.listen(session, "after_flush", self._after_flush)
        event.listen(session, "do_orm_execute", self._refuse_bulk_changes)
        event.listen(session, "transient_to_pending", self._digest_large_values)

    def close(self) -> None:
        event.remove(self._session, "after_flush", self._after_flush)
        event.remove(self._session, "do_orm_execute", self._refuse_bulk_changes)
        event.remove(self._session, "transient_to_pending", self._digest_large_values)
        self.early.discard()

    @property
    def tables(self) -> set[str]:
        return {table for table, _ in self.touched}

    def _after_flush(self, session: Session, _context: Any) -> None:
        # The new, dirty and deleted collections still show this flush's objects here.
        for instance in (*session.new, *session.dirty, *session.deleted):
            mapper = inspect(instance).mapper
            table = mapper.local_table
            if not is_covered(table.name):
                continue
            if instance in session.dirty and not session.is_modified(instance):
                continue
            key = tuple(mapper.primary_key_from_instance(instance))
            self.touched.setdefault((table.name, key), None)

    def _digest_large_values(self, _session: Session, instance: Any) -> None:
        """Start digesting a new row's large bytes values now (sealing compares them with
        what is read back before using the digest)."""
        state = inspect(instance)
        table = state.mapper.local_table
        if not is_covered(table.name):
            return
        for attribute in state.mapper.column_attrs:
            value = state.dict.get(attribute.key)
            if isinstance(value, bytes) and len(value) >= EARLY_DIGEST_BYTES:
                column = attribute.columns[0]
                if column.table is table:
                    self.early.start(table.name, column.name, value)

    def _refuse_bulk_changes(self, state: ORMExecuteState) -> None:
        if self.allow_bulk or not (state.is_update or state.is_delete or state.is_insert):
            return
        table = getattr(state.statement, "table", None)
        if table is not None and is_covered(table.name):
            raise UncoveredWrite(f"a bulk change of {table.name} bypasses the audit chain's "
                                 "row digests; change rows through the session")

    def sealed_rows(self) -> list[dict[str, Any]]:
        """The digests of every written row as it now stands (or that it is gone), in a stable
        order: by table, then key."""
        rows = []
        for table_name, key in sorted(self.touched, key=_sort_key):
            table = t.Base.metadata.tables[table_name]
            names = [column.name for column in table.primary_key.columns]
            stored = read_row(self._session, table, dict(zip(names, key, strict=True)))
            if stored is None:
                rows.append({"table": table_name, "deleted": True,
                             "key": [plain_value(table, name, value)
                                     for name, value in zip(names, key, strict=True)]})
            else:
                rows.append({"table": table_name, "key": list(key_of(table, stored)),
                             "columns": column_digests(table, stored, self.early)})
        return rows


def _sort_key(item: tuple[str, tuple[Any, ...]]) -> tuple[str, str]:
    return item[0], repr(item[1])
