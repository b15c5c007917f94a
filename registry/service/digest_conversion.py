"""Re-recording the digests of stored bytes when revision 0010 changes their form, run by that
revision inside the upgrade's own transaction (and back by its downgrade).

Until revision 0009 a bytes value was digested as the hex text of {"bytes": hex}; from 0010 as
its bytes themselves (registry.store.row_digests.bytes_digest), a quarter of the work for the
compact rows of a served batch. The only covered column holding bytes is served_rows.content.

The chain is replayed first. A row whose recorded digest matches its value in the form being
left is re-recorded in the new form by one `catalogue.convert` event; a row that already
matches the new form is left as it is; a row that matches neither has changed since the chain
recorded it, and the upgrade stops there with nothing changed: re-recording it would vouch for
a change nobody made through the catalogue.
"""

from __future__ import annotations

import hashlib
from collections.abc import Callable
from typing import Any

from sqlalchemy import LargeBinary, Table

from registry.errors import UserError
from registry.service.row_coverage import ReplayedRows, parse_rows
from registry.store import row_digests
from registry.store.catalogue import Catalogue
from registry.store.row_digests import covered_tables, key_of, row_digest
from registry.store.unit_of_work import UnitOfWork

ACTION = "catalogue.convert"
REVISION = "0010"
BytesDigest = Callable[[str, str, Any], str]


class ChangedRow(UserError):
    """A row no longer holds what the chain recorded: the upgrade will not re-record it."""

    kind = "changed-row"


def hex_bytes_digest(table: str, column: str, value: bytes | bytearray | memoryview) -> str:
    """The form before revision 0010: column_digest of the canonical JSON {"bytes": hex}."""
    digest = hashlib.sha256(f"{table}\x1f{column}\x1f".encode() + b'j:{"bytes":"')
    view = memoryview(value).cast("B")
    for start in range(0, len(view), 1 << 20):
        digest.update(view[start:start + (1 << 20)].hex().encode("ascii"))
    digest.update(b'"}')
    return digest.hexdigest()[:32]


def _column_digests(table: Table, stored: dict[str, Any], form: BytesDigest) -> dict[str, str]:
    digests = row_digests.column_digests(table, stored)
    for column in table.columns:
        value = stored[column.name]
        if isinstance(value, (bytes, bytearray, memoryview)):
            digests[column.name] = form(table.name, column.name, value)
    return digests


def _tables_with_bytes() -> list[Table]:
    return [table for table in covered_tables()
            if any(isinstance(column.type, LargeBinary) for column in table.columns)]


def redigest_bytes(catalogue: Catalogue, actor_name: str, *, upgrading: bool = True) -> int:
    """Re-record, in one event, the digest of every stored row holding bytes whose recorded
    digest is in the form being left; return how many rows it re-recorded."""
    old, new = ((hex_bytes_digest, row_digests.bytes_digest) if upgrading
                else (row_digests.bytes_digest, hex_bytes_digest))
    with UnitOfWork(catalogue) as uow:
        replayed = ReplayedRows()
        for event in uow.audit.events():
            replayed.replay(event.sequence, parse_rows(event.rows_json))
        rows: list[dict[str, Any]] = []
        for table in _tables_with_bytes():
            for stored in uow.rows.scan(table):
                key = key_of(table, stored)
                recorded = replayed.rows.get((table.name, key))
                if recorded is None or recorded[1] is None:
                    continue  # not the chain's: `audit verify` names it, as it did before
                sequence, digest = recorded
                before = _column_digests(table, stored, old)
                if row_digest(before) == digest:
                    rows.append({"table": table.name, "key": list(key),
                                 "columns": _column_digests(table, stored, new)})
                elif row_digest(_column_digests(table, stored, new)) != digest:
                    place = f"{table.name} " + ", ".join(
                        f"{c.name}={v}" for c, v in zip(table.primary_key.columns, key,
                                                       strict=True))
                    raise ChangedRow(
                        f"this row differs from what audit event {sequence} recorded, so the "
                        f"upgrade will not record its digest again; run `lockkeeper audit "
                        f"verify`, and restore the row or the catalogue (nothing was changed)",
                        place=place)
        if not rows:
            return 0
        uow.audit.append(actor_name, ACTION, "catalogue", {
            "revision": REVISION if upgrading else "0009", "rows": len(rows),
            "reason": "the digests of stored bytes are taken over the bytes themselves"
            if upgrading else "the digests of stored bytes are taken over their hex text",
            "form": "docs/row-coverage.md"})
        uow.audit.attach_rows(rows)
        uow.commit()
        return len(rows)
