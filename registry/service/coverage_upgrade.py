"""Bringing rows written before the chain covered them under it, once, when `init` upgrades a
catalogue from a release older than revision 0003.

One event, `audit.cover`, records the digests of every covered row as it stands at the upgrade:
from then on any change to those rows is found. What happened to them before the upgrade is
taken on trust, as the older release could not have told either (docs/row-coverage.md).
"""

from __future__ import annotations

from typing import Any

from registry.store.catalogue import Catalogue
from registry.store.row_digests import column_digests, covered_tables, key_of
from registry.store.unit_of_work import UnitOfWork

ACTION = "audit.cover"


def cover_rows_written_before_coverage(catalogue: Catalogue, actor_name: str) -> int:
    """Record every covered row in one event if no event records rows yet; return how many.

    Part of `init`, which needs write access to the database itself, so it asks no role: a
    catalogue being upgraded may not even have its roles readable yet."""
    with UnitOfWork(catalogue) as uow:
        if uow.audit.records_rows():
            return 0
        rows: list[dict[str, Any]] = []
        for table in covered_tables():
            for stored in uow.rows.scan(table):
                rows.append({"table": table.name, "key": list(key_of(table, stored)),
                             "columns": column_digests(table, stored)})
        if not rows:
            return 0
        uow.audit.append(actor_name, ACTION, "catalogue", {
            "rows": len(rows),
            "reason": "rows written before the audit chain covered every deciding row"})
        uow.audit.attach_rows(rows)
        uow.commit()
        return len(rows)
