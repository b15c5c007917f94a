"""The unit of work: one transaction per use case, and the repositories that work inside it.

A writing unit of work takes the catalogue's write lock first (BEGIN IMMEDIATE on SQLite, a row
lock on the audit head on PostgreSQL), so every decision it makes reads the newest state and the
audit chain never forks. Database errors leave as the typed errors of registry.errors.
"""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import AbstractContextManager
from datetime import datetime
from types import TracebackType
from typing import Any, Literal

from sqlalchemy import select
from sqlalchemy.exc import DBAPIError, IntegrityError, OperationalError
from sqlalchemy.orm import Session

from registry import clock
from registry.canonical_json import canonical_json
from registry.errors import CatalogueUnavailable, Conflict, LockkeeperError
from registry.store import tables as t
from registry.store.audit import GENESIS_HASH, event_hash
from registry.store.audit_repository import AuditEventRepository
from registry.store.blob_store import BlobStore
from registry.store.catalogue import Catalogue, describe, sqlite_write_intent
from registry.store.checkpoint_repository import CheckpointRepository
from registry.store.consumer_repository import ConsumerRepository
from registry.store.dataset_repository import DatasetRepository
from registry.store.dataset_sources_repository import DatasetSourceRepository
from registry.store.document_repository import DocumentRepository
from registry.store.evaluation_repository import EvaluationRepository
from registry.store.feed_repository import FeedRepository
from registry.store.integrity_reads import IntegrityReads
from registry.store.keys_repository import KeyRepository
from registry.store.lineage_repository import LineageRepository
from registry.store.model_repository import ModelRepository
from registry.store.name_repository import NameRepository
from registry.store.page_reads import PageReads
from registry.store.release_repository import ReleaseRepository
from registry.store.role_repository import RoleRepository
from registry.store.row_capture import RowCapture
from registry.store.row_digests import RowReader
from registry.store.serving_repository import ServingRepository
from registry.store.stage_repository import StageRepository
from registry.store.table_copy import TableCopy
from registry.store.token_repository import TokenRepository
from registry.store.version_repository import VersionRepository


def utc_now() -> datetime:
    return clock.now()


class AuditLog:
    """Appends hash-chained events; needs the write lock the unit of work holds."""

    def __init__(self, session: Session) -> None:
        self._session = session
        self.appended: list[t.AuditEvent] = []  # this transaction's events, oldest first
        # The newest event appended, as appended: final unless it stays the transaction's last
        # event, which takes the row digests at commit (attach_rows) and is rehashed.
        self.last_sequence: int | None = None
        self.last_hash: str | None = None

    def append(self, actor: str, action: str, subject: str, details: dict[str, Any]) -> int:
        head = self._session.get(t.AuditHead, 1)
        previous_sequence, previous_hash = (head.sequence, head.hash) if head else (0, GENESIS_HASH)
        sequence = previous_sequence + 1
        occurred_at = utc_now().isoformat(timespec="microseconds")
        # Round-trip the details through canonical JSON so what is hashed is what is stored.
        details_json = canonical_json(details).decode("utf-8")
        digest = event_hash(sequence, occurred_at, actor, action, subject,
                            _json_loads(details_json), previous_hash)
        appended = t.AuditEvent(sequence=sequence, occurred_at=occurred_at, actor=actor,
                                action=action, subject=subject, details_json=details_json,
                                previous_hash=previous_hash, hash=digest)
        self._session.add(appended)
        self.appended.append(appended)
        if head is None:
            self._session.add(t.AuditHead(id=1, sequence=sequence, hash=digest))
        else:
            head.sequence, head.hash = sequence, digest
        self._session.flush()
        self.last_sequence, self.last_hash = sequence, digest
        return sequence

    def attach_rows(self, rows: list[dict[str, Any]]) -> None:
        """Give the transaction's last event the digests of the rows the transaction wrote, and
        rehash it: nothing is chained after it yet, so only it and the head change."""
        last = self.appended[-1]
        rows_json = canonical_json(rows).decode("utf-8")
        last.rows_json = rows_json
        last.hash = event_hash(last.sequence, last.occurred_at, last.actor, last.action,
                               last.subject, _json_loads(last.details_json), last.previous_hash,
                               _json_loads(rows_json))
        head = self._session.get_one(t.AuditHead, 1)
        head.hash = last.hash
        self._session.flush()


    # --- reading the chain back (audit verify, export) ---

    def events(self) -> Iterator[Any]:
        """Every stored event, oldest first, as plain rows (streamed: chains can be long)."""
        query = select(t.AuditEvent.sequence, t.AuditEvent.occurred_at, t.AuditEvent.actor,
                       t.AuditEvent.action, t.AuditEvent.subject, t.AuditEvent.details_json,
                       t.AuditEvent.previous_hash, t.AuditEvent.hash, t.AuditEvent.rows_json
                       ).order_by(t.AuditEvent.sequence)
        yield from self._session.execute(query.execution_options(yield_per=2000))

    def head(self) -> tuple[int, str] | None:
        head = self._session.get(t.AuditHead, 1)
        return (head.sequence, head.hash) if head is not None else None

    def records_rows(self) -> bool:
        """Whether any stored event carries row digests (none did before revision 0003)."""
        return self._session.execute(select(t.AuditEvent.sequence).where(
            t.AuditEvent.rows_json.is_not(None)).limit(1)).first() is not None

    def rows_json_of(self, sequence: int) -> str | None:
        return self._session.execute(select(t.AuditEvent.rows_json).where(
            t.AuditEvent.sequence == sequence)).scalar_one_or_none()


def _json_loads(text: str) -> Any:
    import json

    return json.loads(text)


class UnitOfWork:
    """`with UnitOfWork(catalogue) as uow: ...; uow.commit()`; leaving without commit rolls back."""

    def __init__(self, catalogue: Catalogue, *, write: bool = True) -> None:
        self.catalogue = catalogue
        self.write = write
        self.session: Session
        self.blobs: BlobStore
        self.audit: AuditLog
        self.dataset_sources: DatasetSourceRepository
        self.models: ModelRepository
        self.stages: StageRepository
        self.datasets: DatasetRepository
        self.lineage: LineageRepository
        self.integrity: IntegrityReads
        self.table_copy: TableCopy
        self.roles: RoleRepository
        self.feeds: FeedRepository
        self.consumers: ConsumerRepository
        self.releases: ReleaseRepository
        self.documents: DocumentRepository
        self.tokens: TokenRepository
        self.evaluations: EvaluationRepository
        self.versions: VersionRepository
        self.audit_events: AuditEventRepository
        self.names: NameRepository
        self.keys: KeyRepository
        self.checkpoints: CheckpointRepository
        self.capture: RowCapture | None = None
        self.rows: RowReader
        self.serving: ServingRepository
        self.pages: PageReads

    def __enter__(self) -> UnitOfWork:
        self._intent_token = sqlite_write_intent.set(self.write)
        self.session = self.catalogue.sessions()
        self.blobs = BlobStore(self.session)
        self.audit = AuditLog(self.session)
        self._attach_repositories()
        try:
            self.session.begin()
            if self.write:
                self._take_write_lock()
        except BaseException as error:
            self._close()
            raise _translate(error, self.catalogue) from None
        return self

    def _attach_repositories(self) -> None:
        """The repositories of this transaction, one attribute per area (`uow.roles` ...)."""
        self.models = ModelRepository(self.session)
        self.stages = StageRepository(self.session)
        self.datasets = DatasetRepository(self.session)
        self.lineage = LineageRepository(self.session)
        self.integrity = IntegrityReads(self.session)  # whole-catalogue reads of `audit verify`
        self.table_copy = TableCopy(self.session, self.catalogue.dialect)  # export and import
        self.roles = RoleRepository(self.session)
        self.feeds = FeedRepository(self.session)
        self.consumers = ConsumerRepository(self.session)
        self.releases = ReleaseRepository(self.session)
        self.documents = DocumentRepository(self.session)
        self.tokens = TokenRepository(self.session)
        self.evaluations = EvaluationRepository(self.session)
        self.versions = VersionRepository(self.session)
        self.audit_events = AuditEventRepository(self.session)
        self.names = NameRepository(self.session)
        self.keys = KeyRepository(self.session)
        self.checkpoints = CheckpointRepository(self.session)
        self.rows = RowReader(self.session)
        if self.write:
            self.capture = RowCapture(self.session)
        self.serving = ServingRepository(self.session)
        self.pages = PageReads(self.session)  # the read side's rows for the web pages
        self.dataset_sources = DatasetSourceRepository(self.session)

    def _take_write_lock(self) -> None:
        if self.catalogue.dialect == "sqlite":
            return  # BEGIN IMMEDIATE already holds the write lock
        head = self.session.execute(
            select(t.AuditHead).where(t.AuditHead.id == 1).with_for_update()).scalar_one_or_none()
        if head is None:
            # The very first write: create the head row; a concurrent first writer loses on the
            # primary key and gets a conflict it can retry.
            self.session.add(t.AuditHead(id=1, sequence=0, hash=GENESIS_HASH))
            self.session.flush()

    def savepoint(self) -> AbstractContextManager[Any]:
        """A nested transaction: a failure inside it rolls back to here, not the whole unit."""
        return self.session.begin_nested()

    def commit(self) -> None:
        from registry.store.sealing import seal_transaction

        try:
            if self.write:
                seal_transaction(self)
            self.session.commit()
        except BaseException as error:
            raise _translate(error, self.catalogue) from None
        if self.write:
            self.catalogue.committed()

    def __exit__(self, exc_type: type[BaseException] | None, exc: BaseException | None,
                 tb: TracebackType | None) -> Literal[False]:
        try:
            if self.session.in_transaction():
                self.session.rollback()
        except DBAPIError:
            pass  # the connection is gone; nothing was committed
        finally:
            self._close()
        if exc is not None and not isinstance(exc, LockkeeperError):
            translated = _translate(exc, self.catalogue)
            if translated is not exc:
                raise translated from None
        return False

    def _close(self) -> None:
        if self.capture is not None:
            self.capture.close()
            self.capture = None
        self.session.close()
        sqlite_write_intent.reset(self._intent_token)


def _translate(error: BaseException, catalogue: Catalogue) -> BaseException:
    """Database errors a user can meet become typed errors; anything else stays as it is."""
    if isinstance(error, IntegrityError):
        return Conflict(f"a concurrent change got there first ({_first_line(error.orig)}); "
                        "try again")
    if isinstance(error, OperationalError):
        message = _first_line(error.orig)
        lowered = message.lower()
        if "locked" in lowered or "deadlock" in lowered or "could not serialize" in lowered:
            return Conflict(f"the catalogue is busy ({message}); try again")
        if "readonly" in lowered or "read-only" in lowered:
            return CatalogueUnavailable(f"the catalogue at {describe(catalogue.url)} is "
                                        "read-only; nothing was changed")
        return CatalogueUnavailable(f"lost the catalogue at {describe(catalogue.url)}: "
                                    f"{message}; nothing was changed")
    if isinstance(error, DBAPIError):
        return CatalogueUnavailable(f"catalogue error at {describe(catalogue.url)}: "
                                    f"{_first_line(error.orig)}; nothing was changed")
    return error


def _first_line(error: object) -> str:
    lines = str(error).strip().splitlines()
    return lines[0] if lines else type(error).__name__
