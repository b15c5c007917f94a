"""Export the whole catalogue to a folder from one snapshot, and import such a folder into an
empty catalogue in one transaction, checking every file, the audit chain and every row first.

Folder layout (format `lockkeeper-export/1`, docs/export-format.md):
  manifest.json          size and SHA-256 of every file, the audit head, the schema revision,
                         and its seal: the catalogue's signature over all of that
  tables/<table>.jsonl   one JSON object per row, ordered by primary key (blobs: digest and size)
  blobs/<digest>         the bytes of every blob, named by their SHA-256 (the catalogue's pieces of
                         them, blob_chunks, are not a table file)
"""

from __future__ import annotations

import base64
import hashlib
import json
import os
from dataclasses import dataclass
from datetime import UTC, datetime
from pathlib import Path
from typing import Any, BinaryIO

from sqlalchemy import Table

from registry import progress
from registry.canonical_json import canonical_json
from registry.errors import UserError
from registry.service.export_folder import MAX_MANIFEST_BYTES, BadExport, ExportFolder
from registry.service.export_rows import TableRows, check_backed_by_chain, check_keys, parse_table
from registry.service.row_coverage import parse_rows
from registry.signing.checkpoints import SignedCheckpoint, is_signed_by
from registry.signing.keys import ALGORITHM, key_id_of, load_public_key, verify
from registry.store import tables as t
from registry.store.audit import AuditRecord, verify_chain
from registry.store.catalogue import Catalogue
from registry.store.table_copy import catalogue_tables
from registry.store.unit_of_work import UnitOfWork
from registry.timestamps import utc_iso

FORMAT = "lockkeeper-export/1"
BLOB_TABLE = t.Blob.__tablename__
CHUNK_TABLE = t.BlobChunk.__tablename__
# The seal signs this label and the canonical JSON of the manifest without its seal.
SEAL_LABEL = b"lockkeeper export manifest v1\n"
MAX_TRUSTED_KEY_BYTES = 16_384


@dataclass(frozen=True)
class BackupSummary:
    folder: str
    tables: dict[str, int]
    blobs: int
    audit_sequence: int
    audit_hash: str
    sealed_by: str | None = None   # the key that signed the manifest, if any
    trusted: bool = False          # whether that seal was checked against a trusted key


def _plain(value: Any) -> Any:
    if isinstance(value, datetime):
        return utc_iso(value)
    if isinstance(value, (bytes, memoryview)):  # a bytes column kept in its row (served rows)
        return base64.b64encode(bytes(value)).decode("ascii")
    return value


def _row_line(table: Table, row: Any) -> bytes:
    record = {column.name: _plain(row._mapping[column.name]) for column in table.columns}
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


def export_catalogue(catalogue: Catalogue, folder: Path, revision: str) -> BackupSummary:
    _prepare_folder(folder)
    files: dict[str, dict[str, Any]] = {}
    counts: dict[str, int] = {}
    with UnitOfWork(catalogue, write=False) as uow:
        uow.table_copy.begin_snapshot()
        head = uow.audit.head()
        for table in catalogue_tables():
            digest, rows = hashlib.sha256(), 0
            with (folder / "tables" / f"{table.name}.jsonl").open("wb") as out:
                for row in uow.table_copy.rows(table):
                    line = _row_line(table, row)
                    digest.update(line)
                    out.write(line)
                    rows += 1
                    progress.advance()
            counts[table.name] = rows
            files[f"tables/{table.name}.jsonl"] = {
                "rows": rows, "sha256": digest.hexdigest(),
                "bytes": (folder / "tables" / f"{table.name}.jsonl").stat().st_size}
        blob_count = _export_blobs(uow, folder / "blobs")
        current = uow.keys.current()
        current_key_id = current.key_id if current is not None else None
    sequence, head_hash = head if head else (0, "0" * 64)
    manifest = {"format": FORMAT, "revision": revision, "source": catalogue.dialect,
                "exported_at": datetime.now(UTC).isoformat(timespec="seconds"),
                "audit_head": {"sequence": sequence, "hash": head_hash},
                "blobs": blob_count, "files": files}
    key = catalogue.signing_key
    sealed_by = None
    if key is not None and current_key_id == key.key_id:
        manifest["seal"] = {"key_id": key.key_id, "algorithm": ALGORITHM,
                            "signature": key.sign(_seal_message(manifest)).hex()}
        sealed_by = key.key_id
    _write_durably(folder / "manifest.json",
                   json.dumps(manifest, indent=2, sort_keys=True).encode("utf-8"))
    return BackupSummary(str(folder), counts, blob_count, sequence, head_hash, sealed_by)


def _export_blobs(uow: UnitOfWork, folder: Path) -> int:
    """Write each blob to folder/<digest>, a piece at a time; how many were written."""
    count = 0
    out: BinaryIO | None = None
    writing = ""  # the digest of the blob being written
    try:
        for piece in uow.blobs.scan():
            if out is None or piece.digest != writing:
                if out is not None:
                    out.close()
                out, writing = (folder / piece.digest).open("wb"), piece.digest
                count += 1
                progress.advance()
            if piece.content is not None:
                out.write(piece.content)
    finally:
        if out is not None:
            out.close()
    return count


def _seal_message(manifest: dict[str, Any]) -> bytes:
    return SEAL_LABEL + canonical_json({k: v for k, v in manifest.items() if k != "seal"})


def _write_durably(path: Path, content: bytes) -> None:
    # The manifest is written last and atomically: a folder without one is an unfinished export.
    temporary = path.with_suffix(".tmp")
    with temporary.open("wb") as out:
        out.write(content)
        out.flush()
        os.fsync(out.fileno())
    temporary.replace(path)


# --- import -------------------------------------------------------------------------------


def _read_manifest(folder: ExportFolder) -> dict[str, Any]:
    try:
        content = folder.read("manifest.json", most=MAX_MANIFEST_BYTES)
    except BadExport as error:
        if "is missing" in error.message:
            raise BadExport(f"{folder.folder} holds no manifest.json: not a finished export",
                            place="DIR") from None
        raise
    try:
        manifest = json.loads(content)
    except (json.JSONDecodeError, UnicodeDecodeError) as error:
        raise BadExport(f"the manifest is not readable JSON: {error}",
                        place="manifest.json") from None
    if not isinstance(manifest, dict) or manifest.get("format") != FORMAT:
        raise BadExport(f"not a {FORMAT} manifest", place="manifest.json")
    return manifest


def read_trusted_key(path: Path) -> str:
    """The public key an import is told to trust, as PEM text."""
    try:
        if path.stat().st_size > MAX_TRUSTED_KEY_BYTES:
            raise UserError("too large to be a public key", place=f"--trust {path}")
        pem = path.read_text(encoding="ascii")
    except FileNotFoundError:
        raise UserError(f"no such file: {path}", place="--trust") from None
    except (OSError, UnicodeDecodeError) as error:
        raise UserError(f"cannot read {path}: {error}", place="--trust") from None
    load_public_key(pem, place=f"--trust {path}")
    return pem


def _check_seal(manifest: dict[str, Any], trusted_pem: str | None) -> str | None:
    """The key id that sealed the manifest; with a trusted key, proof that it was that key."""
    seal = manifest.get("seal")
    if seal is None:
        if trusted_pem is not None:
            raise BadExport("the manifest is not sealed, so it cannot be trusted",
                            place="manifest.json")
        return None
    if not isinstance(seal, dict) or not all(isinstance(seal.get(k), str)
                                             for k in ("key_id", "algorithm", "signature")):
        raise BadExport("the manifest's seal is malformed", place="manifest.json")
    if trusted_pem is None:
        return seal["key_id"]
    trusted_id = key_id_of(load_public_key(trusted_pem))
    if seal["key_id"] != trusted_id:
        raise BadExport(f"the manifest is sealed by key {seal['key_id']}, not by the trusted "
                        f"key {trusted_id}", place="manifest.json")
    try:
        signature = bytes.fromhex(seal["signature"])
    except ValueError:
        signature = b""
    if not verify(trusted_pem, signature, _seal_message(manifest)):
        raise BadExport("the manifest's seal does not verify under the trusted key: the "
                        "manifest was changed after the export", place="manifest.json")
    return seal["key_id"]


def _file_entry(manifest: dict[str, Any], name: str) -> dict[str, Any]:
    files = manifest.get("files")
    if not isinstance(files, dict):
        raise BadExport("the manifest lists no files", place="manifest.json")
    entry = files.get(name)
    if not isinstance(entry, dict) or not isinstance(entry.get("bytes"), int) \
            or isinstance(entry.get("bytes"), bool) or entry["bytes"] < 0:
        raise BadExport(f"the manifest gives no size for {name}", place="manifest.json")
    return entry


def _read_rows(folder: ExportFolder, manifest: dict[str, Any]) -> dict[str, TableRows]:
    tables: dict[str, TableRows] = {}
    for table in catalogue_tables():
        name = f"tables/{table.name}.jsonl"
        entry = _file_entry(manifest, name)
        content = folder.read(name, size=entry["bytes"])
        if hashlib.sha256(content).hexdigest() != entry.get("sha256"):
            raise BadExport(f"{name} does not match the digest its manifest recorded: it was "
                            "changed after the export", place=name)
        parsed = parse_table(table, name, content)
        if len(parsed.rows) != entry.get("rows"):
            raise BadExport(f"{name} holds {len(parsed.rows)} rows, its manifest says "
                            f"{entry.get('rows')}", place=name)
        tables[table.name] = parsed
    return tables


def _read_blobs(folder: ExportFolder, blobs: TableRows) -> dict[str, bytes]:
    """The bytes of every blob the rows name, each checked against its digest."""
    contents = {}
    for index, row in enumerate(blobs.rows):
        digest = row.get("digest")
        if not isinstance(digest, str) or len(digest) != 64 or \
                any(c not in "0123456789abcdef" for c in digest):
            raise BadExport("a blob row has no valid digest", place=blobs.place(index))
        size = row.get("size")
        if not isinstance(size, int) or size < 0:
            raise BadExport("a blob row has no valid size", place=blobs.place(index))
        place = f"blobs/{digest}"
        content = folder.read(place, size=size)  # bounded by blobs.jsonl, itself by the manifest
        if hashlib.sha256(content).hexdigest() != digest:
            raise BadExport("the blob's bytes do not match its digest", place=place)
        contents[digest] = content
    return contents


def _check_chain(tables: dict[str, TableRows], manifest: dict[str, Any]) -> None:
    events = tables[t.AuditEvent.__tablename__]
    try:
        records = [AuditRecord(e["sequence"], e["occurred_at"], e["actor"], e["action"],
                               e["subject"], json.loads(e["details_json"]), e["previous_hash"],
                               e["hash"], parse_rows(e.get("rows_json"))) for e in events.rows]
    except (KeyError, TypeError, json.JSONDecodeError):
        raise BadExport("an audit event is incomplete", place=events.file) from None
    head = manifest.get("audit_head") or {}
    breaks = verify_chain(records, (head.get("sequence"), head.get("hash")))
    heads = tables[t.AuditHead.__tablename__].rows
    if heads and (heads[0].get("sequence"), heads[0].get("hash")) != (
            head.get("sequence"), head.get("hash")):
        raise BadExport("the exported audit head differs from the manifest's",
                        place="tables/audit_head.jsonl")
    if breaks:
        raise BadExport(f"the audit chain is broken at event {breaks[0].sequence}: "
                        f"{breaks[0].problem}", place=events.file)
    _check_checkpoints(tables, {r.sequence: r.hash for r in records})


def _check_checkpoints(tables: dict[str, TableRows], hashes: dict[int, str]) -> None:
    """Each exported checkpoint must be signed by an exported key and name an exported event."""
    keys = {row["key_id"]: row["public_key_pem"]
            for row in tables[t.SigningKeyRow.__tablename__].rows}
    checkpoints = tables[t.Checkpoint.__tablename__]
    for index, row in enumerate(checkpoints.rows):
        checkpoint = SignedCheckpoint(row["sequence"], row["head_hash"], row["signed_at"],
                                      row["key_id"], row["signature"])
        pem = keys.get(checkpoint.key_id)
        if pem is None or not is_signed_by(checkpoint, pem) or \
                hashes.get(checkpoint.sequence) != checkpoint.head_hash:
            raise BadExport(f"{checkpoint.describe()} does not verify against the exported "
                            "keys and chain", place=checkpoints.place(index))


@dataclass(frozen=True)
class CheckedExport:
    """An export folder read into memory, every digest, the chain and every row checked."""

    folder: str
    manifest: dict[str, Any]
    rows: dict[str, list[dict[str, Any]]]
    blobs: dict[str, bytes]  # the bytes of each blob, by digest
    sealed_by: str | None = None
    trusted: bool = False


def read_export(folder: Path, revision: str, trusted_key_pem: str | None = None
                ) -> CheckedExport:
    """Read and check an export folder without touching any catalogue. With a trusted public
    key, the manifest must carry that key's seal."""
    with ExportFolder(folder) as opened:
        manifest = _read_manifest(opened)
        sealed_by = _check_seal(manifest, trusted_key_pem)
        if manifest.get("revision") != revision:
            raise BadExport(f"the export was taken at schema revision "
                            f"{manifest.get('revision')!r}; this catalogue is at {revision!r}",
                            place="manifest.json")
        tables = _read_rows(opened, manifest)
        blobs = _read_blobs(opened, tables[BLOB_TABLE])
    if len(tables[BLOB_TABLE].rows) != manifest.get("blobs"):
        raise BadExport("the number of blobs differs from the manifest's", place="blobs")
    _check_chain(tables, manifest)
    check_keys(tables)
    check_backed_by_chain(tables)
    return CheckedExport(str(folder), manifest, {name: parsed.rows for name, parsed in
                                                 tables.items()},
                         blobs, sealed_by, trusted_key_pem is not None)


def _require_empty(uow: UnitOfWork) -> None:
    for table in catalogue_tables():
        if table.name == t.AuditHead.__tablename__:
            continue  # a writing unit of work on PostgreSQL may have just created a blank head
        count = uow.table_copy.count(table)
        if count:
            raise UserError(f"the catalogue is not empty (table {table.name} holds {count} "
                            "rows); import only into a freshly initialised catalogue",
                            place="--db")
    uow.table_copy.clear_audit_head()


def import_catalogue(catalogue: Catalogue, export: CheckedExport) -> BackupSummary:
    """Insert a checked export into an empty catalogue, in one transaction, keeping every id."""
    with UnitOfWork(catalogue) as uow:
        capture = uow.capture
        assert capture is not None  # a writing unit of work captures its rows
        capture.allow_bulk = True  # the imported chain itself backs every imported row
        _require_empty(uow)
        for table in catalogue_tables():
            if export.rows[table.name]:
                uow.table_copy.insert(table, export.rows[table.name])
                progress.advance(len(export.rows[table.name]))
            if table.name == BLOB_TABLE:
                for digest, content in export.blobs.items():
                    uow.blobs.add_pieces(digest, content)
        uow.table_copy.reset_id_counters(catalogue_tables())
        uow.commit()
    head = export.manifest["audit_head"]
    return BackupSummary(export.folder, {name: len(r) for name, r in export.rows.items()},
                         len(export.rows[BLOB_TABLE]), head["sequence"], head["hash"],
                         export.sealed_by, export.trusted)
