"""The unit of work: one transaction per use case, and the repositories that work inside it.

A writing unit of work takes the catalogue's write lock first (BEGIN IMMEDIATE on SQLite, a row
lock on the audit head on PostgreSQL), so every decision it makes reads the newest state and the
audit chain never forks. Database errors leave as the typed errors of registry.errors.
"""

from __future__ import annotations

import hashlib
from datetime import UTC, datetime
from types import TracebackType
from typing import Any, Literal

from sqlalchemy import select
from sqlalchemy.exc import DBAPIError, IntegrityError, OperationalError
from sqlalchemy.orm import Session

from registry.canonical_json import canonical_json
from registry.errors import CatalogueUnavailable, Conflict, LockkeeperError, NotFound
from registry.store import tables as t
from registry.store.audit import GENESIS_HASH, event_hash
from registry.store.catalogue import Catalogue, describe, sqlite_write_intent
from registry.store.role_repository import RoleRepository


def utc_now() -> datetime:
    return datetime.now(UTC)


class BlobStore:
    """Content-addressed bytes kept in the catalogue itself, so they commit with their rows."""

    def __init__(self, session: Session) -> None:
        self._session = session

    def put(self, content: bytes) -> str:
        digest = hashlib.sha256(content).hexdigest()
        if self._session.get(t.Blob, digest) is None:
            self._session.add(t.Blob(digest=digest, size=len(content), content=content))
            self._session.flush()
        return digest

    def get(self, digest: str) -> bytes:
        blob = self._session.get(t.Blob, digest)
        if blob is None:
            raise NotFound(f"no stored content with digest {digest}")
        return blob.content


class AuditLog:
    """Appends hash-chained events; needs the write lock the unit of work holds."""

    def __init__(self, session: Session) -> None:
        self._session = session

    def append(self, actor: str, action: str, subject: str, details: dict[str, Any]) -> int:
        head = self._session.get(t.AuditHead, 1)
        previous_sequence, previous_hash = (head.sequence, head.hash) if head else (0, GENESIS_HASH)
        sequence = previous_sequence + 1
        occurred_at = utc_now().isoformat(timespec="microseconds")
        # Round-trip the details through canonical JSON so what is hashed is what is stored.
        details_json = canonical_json(details).decode("utf-8")
        digest = event_hash(sequence, occurred_at, actor, action, subject,
                            _json_loads(details_json), previous_hash)
        self._session.add(t.AuditEvent(sequence=sequence, occurred_at=occurred_at, actor=actor,
                                       action=action, subject=subject, details_json=details_json,
                                       previous_hash=previous_hash, hash=digest))
        if head is None:
            self._session.add(t.AuditHead(id=1, sequence=sequence, hash=digest))
        else:
            head.sequence, head.hash = sequence, digest
        self._session.flush()
        return sequence


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
        self.roles: RoleRepository

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
        self.roles = RoleRepository(self.session)

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

    def commit(self) -> None:
        try:
            self.session.commit()
        except BaseException as error:
            raise _translate(error, self.catalogue) from None

    def __exit__(self, exc_type: type[BaseException] | None, exc: BaseException | None,
                 tb: TracebackType | None) -> Literal[False]:
        # Literal[False], not bool: the unit of work never swallows an error, so code after a
        # `with` block that returns inside it is unreachable (and type checkers know it).
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
