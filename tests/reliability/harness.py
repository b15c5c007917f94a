"""Shared tools of the reliability tests: run `lockkeeper` as a process, read the catalogue's
state as plain counts, and check the promises every fault must keep."""

from __future__ import annotations

import os
import subprocess
import sys
from collections import Counter
from dataclasses import dataclass
from pathlib import Path

from sqlalchemy import func, select, text

from registry.service.integrity import verify_catalogue
from registry.store import tables as t
from registry.store.catalogue import open_catalogue

ROOT = Path(__file__).resolve().parents[2]
CLEAN_EXIT_CODES = {0, 1, 2, 3}


def process_env(user: str = "ines.okafor", **extra: str) -> dict[str, str]:
    return {**os.environ, "PYTHONPATH": str(ROOT), "LOCKKEEPER_USER": user, **extra}


def lockkeeper_command(url: str, *arguments: str) -> list[str]:
    return [sys.executable, "-m", "registry", "--db", url, *arguments]


def run_lockkeeper(url: str, *arguments: str, user: str = "ines.okafor",
                   timeout: float = 300) -> subprocess.CompletedProcess:
    return subprocess.run(lockkeeper_command(url, *arguments), env=process_env(user),
                          capture_output=True, text=True, timeout=timeout)


def is_clean_failure(stderr: str) -> bool:
    """A failure a person can act on: one `lockkeeper:` line, never a traceback."""
    lines = [line for line in stderr.splitlines() if line.strip()]
    return "Traceback" not in stderr and len(lines) == 1 and lines[0].startswith("lockkeeper: ")


@dataclass(frozen=True)
class CatalogueState:
    """Row counts of every table, the audit head, and the blobs with what refers to them."""

    counts: dict[str, int]
    audit_sequence: int
    blobs: frozenset[str]
    referenced: frozenset[str]

    def delta(self, before: CatalogueState) -> dict[str, int]:
        change = Counter(self.counts)
        change.subtract(before.counts)
        change["audit_sequence"] = self.audit_sequence - before.audit_sequence
        return {name: n for name, n in change.items() if n}


def read_state(url: str) -> CatalogueState:
    catalogue = open_catalogue(url)
    try:
        with catalogue.engine.connect() as connection:
            counts = {table.name: connection.execute(
                select(func.count()).select_from(table)).scalar_one()
                for table in t.Base.metadata.sorted_tables}
            head = connection.execute(select(t.AuditHead.sequence)).scalar_one_or_none()
            blobs = frozenset(connection.execute(select(t.Blob.digest)).scalars())
            referenced = frozenset(
                list(connection.execute(select(t.Version.stored_blob_digest)).scalars())
                + list(connection.execute(select(t.Dataset.fingerprint_digest)).scalars())
                + list(connection.execute(select(t.Evaluation.predictions_digest)).scalars()))
        return CatalogueState(counts, head or 0, blobs, referenced)
    finally:
        catalogue.close()


def assert_catalogue_sound(url: str) -> CatalogueState:
    """The catalogue opens, `audit verify` is clean, no blob is orphaned or missing."""
    state = read_state(url)
    assert state.blobs - state.referenced == set(), "orphaned blobs"
    assert state.referenced - state.blobs == set(), "missing blobs"
    catalogue = open_catalogue(url)
    try:
        report = verify_catalogue(catalogue)
    finally:
        catalogue.close()
    assert report.ok, report.findings
    return state


def write_transaction_open(url: str, application_name: str) -> bool:
    """Is a writer in the middle of a write transaction right now?

    PostgreSQL: the writer's backend holds a transaction id (it has locked the audit head or
    written a row). SQLite: another BEGIN IMMEDIATE cannot take the write lock at once.
    """
    catalogue = open_catalogue(url)
    try:
        if catalogue.dialect == "postgresql":
            with catalogue.engine.connect() as connection:
                return bool(connection.execute(text(
                    "SELECT count(*) FROM pg_stat_activity WHERE application_name = :name "
                    "AND backend_xid IS NOT NULL"), {"name": application_name}).scalar_one())
        import sqlite3

        connection = sqlite3.connect(catalogue.url.database, timeout=0, isolation_level=None)
        try:
            connection.execute("BEGIN IMMEDIATE")
            connection.execute("ROLLBACK")
            return False
        except sqlite3.OperationalError:
            return True
        finally:
            connection.close()
    finally:
        catalogue.close()
