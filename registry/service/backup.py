"""Export the whole catalogue to a folder from one snapshot, and import such a folder into an
empty catalogue in one transaction, checking every digest and the audit chain first.

Folder layout (format `lockkeeper-export/1`):
  manifest.json          counts and SHA-256 of every file, the audit head, the schema revision
  tables/<table>.jsonl   one JSON object per row, ordered by primary key (blobs: digest and size)
  blobs/<digest>         the bytes of every blob, named by their SHA-256
"""

from __future__ import annotations

import hashlib
import json
import os
from dataclasses import dataclass
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

from sqlalchemy import Boolean, DateTime, Table, delete, func, select, text

from registry.errors import UserError
from registry.store import tables as t
from registry.store.audit import AuditRecord, verify_chain
from registry.store.catalogue import Catalogue
from registry.store.unit_of_work import UnitOfWork

FORMAT = "lockkeeper-export/1"
BLOB_TABLE = t.Blob.__tablename__


class BadExport(UserError):
    """The export folder is missing, incomplete or changed since it was written."""


@dataclass(frozen=True)
class BackupSummary:
    folder: str
    tables: dict[str, int]
    blobs: int
    audit_sequence: int
    audit_hash: str


def _tables() -> list[Table]:
    """Every catalogue table in foreign-key order, parents before children."""
    return list(t.Base.metadata.sorted_tables)


def _plain(value: Any) -> Any:
    if isinstance(value, datetime):
        # SQLite hands back naive datetimes that were written as UTC; PostgreSQL aware ones.
        aware = value.replace(tzinfo=UTC) if value.tzinfo is None else value.astimezone(UTC)
        return aware.isoformat(timespec="microseconds")
    return value


def _row_line(table: Table, row: Any) -> bytes:
    record = {column.name: _plain(row._mapping[column.name]) for column in table.columns
              if not (table.name == BLOB_TABLE and column.name == "content")}
    return json.dumps(record, sort_keys=True, separators=(",", ":")).encode("utf-8") + b"\n"


def _prepare_folder(folder: Path) -> None:
    if folder.exists() and (not folder.is_dir() or any(folder.iterdir())):
        raise UserError(f"{folder} is not an empty folder; export into a new or empty one",
                        place="DIR")
    try:
        (folder / "tables").mkdir(parents=True, exist_ok=True)
        (folder / "blobs").mkdir(exist_ok=True)
    except OSError as error:
        raise UserError(f"cannot create {folder}: {error}", place="DIR") from None


def _begin_snapshot(uow: UnitOfWork) -> None:
    """Make every read of this unit of work see one snapshot of the catalogue."""
    if uow.catalogue.dialect == "postgresql":
        # Must be the transaction's first statement; REPEATABLE READ gives one snapshot.
        uow.session.execute(text("SET TRANSACTION ISOLATION LEVEL REPEATABLE READ READ ONLY"))
    # SQLite (WAL): a read transaction sees the snapshot of its first read, taken below.


def export_catalogue(catalogue: Catalogue, folder: Path, revision: str) -> BackupSummary:
    _prepare_folder(folder)
    files: dict[str, dict[str, Any]] = {}
    counts: dict[str, int] = {}
    with UnitOfWork(catalogue, write=False) as uow:
        _begin_snapshot(uow)
        head = uow.session.execute(select(t.AuditHead.sequence, t.AuditHead.hash)).first()
        for table in _tables():
            digest, rows = hashlib.sha256(), 0
            columns = [table.c[c.name] for c in table.columns
                       if not (table.name == BLOB_TABLE and c.name == "content")]
            query = select(*columns).order_by(*table.primary_key.columns)
            with (folder / "tables" / f"{table.name}.jsonl").open("wb") as out:
                for row in uow.session.execute(query):
                    line = _row_line(table, row)
                    digest.update(line)
                    out.write(line)
                    rows += 1
            counts[table.name] = rows
            files[f"tables/{table.name}.jsonl"] = {"rows": rows, "sha256": digest.hexdigest()}
        blob_count = 0
        for digest_text, content in uow.session.execute(
                select(t.Blob.digest, t.Blob.content).order_by(t.Blob.digest)
                .execution_options(yield_per=8)):
            (folder / "blobs" / digest_text).write_bytes(content)
            blob_count += 1
    sequence, head_hash = (head.sequence, head.hash) if head else (0, "0" * 64)
    manifest = {"format": FORMAT, "revision": revision, "source": catalogue.dialect,
                "exported_at": datetime.now(UTC).isoformat(timespec="seconds"),
                "audit_head": {"sequence": sequence, "hash": head_hash},
                "blobs": blob_count, "files": files}
    _write_durably(folder / "manifest.json",
                   json.dumps(manifest, indent=2, sort_keys=True).encode("utf-8"))
    return BackupSummary(str(folder), counts, blob_count, sequence, head_hash)


def _write_durably(path: Path, content: bytes) -> None:
    # The manifest is written last and atomically: a folder without one is an unfinished export.
    temporary = path.with_suffix(".tmp")
    with temporary.open("wb") as out:
        out.write(content)
        out.flush()
        os.fsync(out.fileno())
    temporary.replace(path)


# --- import -------------------------------------------------------------------------------


def _read_manifest(folder: Path) -> dict[str, Any]:
    path = folder / "manifest.json"
    if not path.is_file():
        raise BadExport(f"{folder} holds no manifest.json: not a finished export", place="DIR")
    try:
        manifest = json.loads(path.read_bytes())
    except (json.JSONDecodeError, UnicodeDecodeError, OSError) as error:
        raise BadExport(f"the manifest is not readable JSON: {error}",
                        place="manifest.json") from None
    if not isinstance(manifest, dict) or manifest.get("format") != FORMAT:
        raise BadExport(f"not a {FORMAT} manifest", place="manifest.json")
    return manifest


def _column_value(table: Table, name: str, value: Any, place: str) -> Any:
    if name not in table.c:
        raise BadExport(f"unknown column {name!r}", place=place)
    column_type = table.c[name].type
    if value is None:
        return None
    if isinstance(column_type, DateTime):
        try:
            return datetime.fromisoformat(value)
        except (TypeError, ValueError):
            raise BadExport(f"column {name} is not a timestamp", place=place) from None
    if isinstance(column_type, Boolean) and not isinstance(value, bool):
        raise BadExport(f"column {name} is not true or false", place=place)
    return value


def _read_rows(folder: Path, manifest: dict[str, Any]) -> dict[str, list[dict[str, Any]]]:
    files = manifest.get("files")
    if not isinstance(files, dict):
        raise BadExport("the manifest lists no files", place="manifest.json")
    rows: dict[str, list[dict[str, Any]]] = {}
    for table in _tables():
        name = f"tables/{table.name}.jsonl"
        entry = files.get(name)
        path = folder / name
        if not isinstance(entry, dict) or not path.is_file():
            raise BadExport(f"{name} is missing", place=name)
        content = path.read_bytes()
        if hashlib.sha256(content).hexdigest() != entry.get("sha256"):
            raise BadExport(f"{name} does not match the digest its manifest recorded: it was "
                            "changed after the export", place=name)
        table_rows = []
        for number, line in enumerate(content.splitlines(), start=1):
            place = f"{name} line {number}"
            try:
                record = json.loads(line)
            except (json.JSONDecodeError, UnicodeDecodeError):
                raise BadExport("not a JSON object", place=place) from None
            if not isinstance(record, dict):
                raise BadExport("not a JSON object", place=place)
            table_rows.append({key: _column_value(table, key, value, place)
                               for key, value in record.items()})
        if len(table_rows) != entry.get("rows"):
            raise BadExport(f"{name} holds {len(table_rows)} rows, its manifest says "
                            f"{entry.get('rows')}", place=name)
        rows[table.name] = table_rows
    return rows


def _attach_blobs(folder: Path, rows: list[dict[str, Any]]) -> None:
    for row in rows:
        digest = row.get("digest")
        if not isinstance(digest, str) or len(digest) != 64 or "/" in digest:
            raise BadExport("a blob row has no valid digest", place="tables/blobs.jsonl")
        place = f"blobs/{digest}"
        try:
            content = (folder / "blobs" / digest).read_bytes()
        except OSError:
            raise BadExport("the blob file is missing", place=place) from None
        if hashlib.sha256(content).hexdigest() != digest or len(content) != row.get("size"):
            raise BadExport("the blob's bytes do not match its digest", place=place)
        row["content"] = content


def _check_chain(rows: dict[str, list[dict[str, Any]]], manifest: dict[str, Any]) -> None:
    events = rows[t.AuditEvent.__tablename__]
    try:
        records = [AuditRecord(e["sequence"], e["occurred_at"], e["actor"], e["action"],
                               e["subject"], json.loads(e["details_json"]), e["previous_hash"],
                               e["hash"]) for e in events]
    except (KeyError, TypeError, json.JSONDecodeError):
        raise BadExport("an audit event is incomplete",
                        place="tables/audit_events.jsonl") from None
    head = manifest.get("audit_head") or {}
    # Unchecked JSON from the export: a missing or wrong head shows as a break of the chain.
    head_sequence: Any = head.get("sequence")
    head_hash: Any = head.get("hash")
    breaks = verify_chain(records, (head_sequence, head_hash))
    heads = rows[t.AuditHead.__tablename__]
    if heads and (heads[0].get("sequence"), heads[0].get("hash")) != (
            head.get("sequence"), head.get("hash")):
        raise BadExport("the exported audit head differs from the manifest's",
                        place="tables/audit_head.jsonl")
    if breaks:
        raise BadExport(f"the audit chain is broken at event {breaks[0].sequence}: "
                        f"{breaks[0].problem}", place="tables/audit_events.jsonl")


def _require_empty(uow: UnitOfWork) -> None:
    for table in _tables():
        if table.name == t.AuditHead.__tablename__:
            continue  # a writing unit of work on PostgreSQL may have just created a blank head
        count = uow.session.execute(select(func.count()).select_from(table)).scalar_one()
        if count:
            raise UserError(f"the catalogue is not empty (table {table.name} holds {count} "
                            "rows); import only into a freshly initialised catalogue",
                            place="--db")
    uow.session.execute(delete(t.AuditHead))


def _reset_sequences(uow: UnitOfWork) -> None:
    """PostgreSQL keeps id counters apart from the rows; move them past the imported ids."""
    if uow.catalogue.dialect != "postgresql":
        return
    for table in _tables():
        keys = list(table.primary_key.columns)
        if len(keys) != 1 or keys[0].autoincrement is False or keys[0].name != "id":
            continue
        sequence = uow.session.execute(
            text("SELECT pg_get_serial_sequence(:table, 'id')"), {"table": table.name}
        ).scalar_one()
        if sequence:
            uow.session.execute(text(
                f"SELECT setval('{sequence}', COALESCE((SELECT max(id) FROM {table.name}), 0) + 1, "
                "false)"))


@dataclass(frozen=True)
class CheckedExport:
    """An export folder read into memory, every digest and the audit chain already checked."""

    folder: str
    manifest: dict[str, Any]
    rows: dict[str, list[dict[str, Any]]]


def read_export(folder: Path, revision: str) -> CheckedExport:
    """Read and check an export folder without touching any catalogue."""
    if not folder.is_dir():
        raise BadExport(f"no such export folder: {folder}", place="DIR")
    manifest = _read_manifest(folder)
    if manifest.get("revision") != revision:
        raise BadExport(f"the export was taken at schema revision {manifest.get('revision')!r}; "
                        f"this catalogue is at {revision!r}", place="manifest.json")
    rows = _read_rows(folder, manifest)
    _attach_blobs(folder, rows[BLOB_TABLE])
    if len(rows[BLOB_TABLE]) != manifest.get("blobs"):
        raise BadExport("the number of blobs differs from the manifest's", place="blobs")
    _check_chain(rows, manifest)
    return CheckedExport(str(folder), manifest, rows)


def import_catalogue(catalogue: Catalogue, export: CheckedExport) -> BackupSummary:
    """Insert a checked export into an empty catalogue, in one transaction, keeping every id."""
    with UnitOfWork(catalogue) as uow:
        _require_empty(uow)
        for table in _tables():
            if export.rows[table.name]:
                uow.session.execute(table.insert(), export.rows[table.name])
        _reset_sequences(uow)
        uow.commit()
    head = export.manifest["audit_head"]
    return BackupSummary(export.folder, {name: len(r) for name, r in export.rows.items()},
                         len(export.rows[BLOB_TABLE]), head["sequence"], head["hash"])
