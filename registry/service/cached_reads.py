"""The hot path's reads, cached per process until the catalogue changes.

Every change to the catalogue appends to the audit log in its own transaction, so the audit
head's sequence number is the catalogue's version. One primary-key read of it per request tells
whether a cached answer (who a token stands for, who holds a stage) still holds; a token's
expiry is checked on every use. A revoked token or role, a promotion or a rollback is seen by
the very next request.
"""

from __future__ import annotations

import threading
from typing import Any

from sqlalchemy import Engine, create_engine, event, select
from sqlalchemy.pool import QueuePool

from registry.service import tokens
from registry.service.actors import Actor
from registry.service.stage_lookup import StageHolder, read_stage_holder
from registry.store import tables as t
from registry.store.catalogue import SQLITE_BUSY_TIMEOUT_MS, Catalogue
from registry.store.unit_of_work import utc_now

HEAD_QUERY = select(t.AuditHead.sequence).where(t.AuditHead.id == 1)


def read_engine(catalogue: Catalogue) -> Engine:
    """PostgreSQL's engine already pools; SQLite's opens a file per unit of work, so readers get
    a small pool of their own, read-only and waiting politely for a writer."""
    if catalogue.dialect != "sqlite":
        return catalogue.engine
    engine = create_engine(catalogue.url, poolclass=QueuePool, pool_size=8, max_overflow=8,
                           connect_args={"check_same_thread": False})

    @event.listens_for(engine, "connect")
    def on_connect(dbapi_connection, _record):  # pragma: no cover - exercised by every read
        cursor = dbapi_connection.cursor()
        cursor.execute(f"PRAGMA busy_timeout = {SQLITE_BUSY_TIMEOUT_MS}")
        cursor.execute("PRAGMA query_only = ON")
        cursor.close()

    return engine


class CachedReads:
    def __init__(self, catalogue: Catalogue) -> None:
        self.catalogue = catalogue
        self.engine = read_engine(catalogue)
        self._lock = threading.Lock()
        self._generation: int | None = None
        self._standings: dict[str, tokens.TokenStanding] = {}
        self._holders: dict[tuple[str, str], StageHolder] = {}

    def generation(self) -> int:
        """The catalogue's version now; forgets every cached answer when it moved."""
        with self.engine.connect() as connection:
            value = connection.execute(HEAD_QUERY).scalar() or 0
        with self._lock:
            if value != self._generation:
                self._standings.clear()
                self._holders.clear()
                self._generation = value
        return value

    def _remember(self, cache: dict, key: Any, value: Any, generation: int) -> None:
        with self._lock:
            # Only an answer read at the version still current may be kept.
            if self._generation == generation:
                cache[key] = value

    def authenticate(self, secret: str, generation: int) -> Actor:
        key = tokens.hash_secret(secret)  # never keep a secret itself, even in memory
        standing = self._standings.get(key) if self._generation == generation else None
        if standing is None:
            standing = tokens.token_standing(self.catalogue, secret)
            self._remember(self._standings, key, standing, generation)
        return standing.check_expiry(utc_now())

    def stage_holder(self, model: str, stage: str, generation: int) -> StageHolder:
        key = (model, stage)
        holder = self._holders.get(key) if self._generation == generation else None
        if holder is None:
            with self.engine.connect() as connection:
                holder = read_stage_holder(connection, model, stage)
            self._remember(self._holders, key, holder, generation)
        return holder

    def close(self) -> None:
        if self.engine is not self.catalogue.engine:
            self.engine.dispose()
