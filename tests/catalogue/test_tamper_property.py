"""One byte of one column of one row, for every table and column: `audit verify` must fail,
and its first finding must name what was changed. On SQLite and, when configured, PostgreSQL."""

from __future__ import annotations

import random

import pytest

from registry.service.integrity import verify_catalogue
from registry.store import tables as t
from registry.store.row_digests import is_covered, key_columns

from tests.catalogue.tamper_helpers import RawDatabase, build_story_catalogue, one_byte_edit

# Columns that decide nothing, so a change to them is not a finding (docs/row-coverage.md):
# a checkpoint's row number; what a checkpoint vouches for is in its signed fields.
DECIDE_NOTHING = {("checkpoints", "id")}
BLOB_TABLES = {t.Blob.__tablename__, t.BlobChunk.__tablename__}


def _names_the_edit(finding, table: str, column: str) -> bool:
    if table == t.AuditEvent.__tablename__ or table == t.AuditHead.__tablename__:
        return finding.place.startswith("audit event")
    if table == t.Checkpoint.__tablename__:
        return finding.place.startswith("checkpoint")
    if table in BLOB_TABLES:  # a blob's pieces are checked with the blob they make up
        return finding.table in BLOB_TABLES
    table_keys = key_columns(t.Base.metadata.tables[table])
    return finding.table == table and (finding.column == column or column in table_keys)


@pytest.mark.slow
def test_every_one_byte_edit_of_every_column_is_found_and_named(catalogue_url, catalogue):
    build_story_catalogue(catalogue_url)
    assert verify_catalogue(catalogue).ok
    raw = RawDatabase(catalogue)
    chooser = random.Random(15)
    missed = []
    for table in t.Base.metadata.sorted_tables:
        rows = raw.rows(table.name)
        assert rows, f"the story leaves {table.name} empty"
        row = chooser.choice(rows)
        key = {name: row[name] for name in key_columns(table)}
        for column in table.columns:
            if (table.name, column.name) in DECIDE_NOTHING:
                continue
            original = row[column.name]
            raw.update(table.name, key, column.name, one_byte_edit(table.name, column.name,
                                                                    original))
            edited_key = {**key, column.name: one_byte_edit(table.name, column.name, original)} \
                if column.name in key else key
            report = verify_catalogue(catalogue)
            if report.ok or not _names_the_edit(report.findings[0], table.name, column.name):
                missed.append((table.name, column.name,
                               report.findings[0] if report.findings else "intact"))
            raw.update(table.name, edited_key, column.name, original)
        assert verify_catalogue(catalogue).ok, f"restoring {table.name} left a difference"
    assert not missed, "\n".join(map(str, missed))
    assert all(is_covered(name) or name in ("blobs", "blob_chunks", "audit_events",
                                             "audit_head", "checkpoints") for name in t.Base.metadata.tables)
