"""The hot path's reads, cached per process until the catalogue changes.

Every change to the catalogue appends to the audit log in its own transaction, so the audit
head's sequence number is the catalogue's version. One primary-key read of it per request tells
whether a cached answer (who a token stands for, who holds a stage) still holds; a token's
expiry is checked on every use. A revoked token or role, a promotion or a rollback is seen by
the very next request.
"""

from __future__ import annotations

import itertools
import queue
import threading
from typing import Any

from sqlalchemy import Engine, create_engine, event
from sqlalchemy.pool import QueuePool

from registry.errors import CatalogueUnavailable
from registry.service import tokens
from registry.service.actors import Actor
from registry.service.stage_lookup import StageHolder, read_stage_holder
from registry.store.catalogue import SQLITE_BUSY_TIMEOUT_MS, Catalogue, describe
from registry.store.unit_of_work import utc_now

# Asked on every request, so it goes straight to the driver: the Core layer costs more than the
# primary-key read itself. Both drivers take this text as it is.
HEAD_SQL = "SELECT sequence FROM audit_head WHERE id = 1"
READS_IN_FLIGHT = 2


def read_engine(catalogue: Catalogue) -> Engine:
    """A small pool of reading connections in autocommit: each read is one round trip, with no
    BEGIN, ROLLBACK or liveness ping around it. SQLite's are read-only and wait for a writer."""
    if catalogue.dialect != "sqlite":
        return create_engine(catalogue.url, isolation_level="AUTOCOMMIT", pool_size=8,
                             max_overflow=56, pool_recycle=300,
                             connect_args={"connect_timeout": 5})
    engine = create_engine(catalogue.url, poolclass=QueuePool, pool_size=8, max_overflow=56,
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
        # Shared reads of the audit head (see generation): tickets order arrivals and reads.
        self._flight = threading.Condition()
        self._tickets = itertools.count(1)
        self._in_flight: set[int] = set()          # tickets of the reads under way
        self._newest_read: tuple[int, int] = (0, 0)  # (ticket, value) of the newest read done
        self._idle_connections: queue.SimpleQueue = queue.SimpleQueue()
        self._shares_reads = catalogue.dialect != "sqlite"  # a round trip to a server

    def generation(self) -> int:
        """The catalogue's version now; forgets every cached answer when it moved.

        Concurrent requests share reads of the audit head: a request may take the value of a
        read that *began after it arrived*, which therefore saw every change committed before
        it arrived. So no request ever misses a change made before it. With at most
        READS_IN_FLIGHT reads under way, requests that arrive meanwhile wait and then share
        one read: a busy worker makes one read per batch of requests, not one each.

        SQLite's read is a few microseconds in this process, cheaper than waiting for a
        neighbour's: there every request reads for itself."""
        if not self._shares_reads:
            value = self._read_head()
            with self._lock:
                if self._generation is None or value > self._generation:
                    self._forget(value)
            return value
        with self._flight:
            arrived = next(self._tickets)
            while True:
                ticket, value = self._newest_read
                if ticket > arrived:
                    return value
                late_enough = any(started > arrived for started in self._in_flight)
                if not late_enough and len(self._in_flight) < READS_IN_FLIGHT:
                    mine = next(self._tickets)
                    self._in_flight.add(mine)
                    break
                # Wait for a late enough read under way, or for room to start one that every
                # request waiting by then will share.
                self._flight.wait()
        fresh: int | None = None
        try:
            fresh = self._read_head()
        finally:
            with self._flight:
                self._in_flight.discard(mine)
                if fresh is not None and mine > self._newest_read[0]:
                    self._newest_read = (mine, fresh)
                    self._forget_if_moved(fresh)
                self._flight.notify_all()
        assert fresh is not None  # otherwise the read's error is on its way up
        return fresh

    def _read_head(self) -> int:
        # Connections for this read are kept out of the pool, on an idle list of their own: a
        # pool checkout costs more than the read itself.
        try:
            connection = self._idle_connections.get_nowait()
        except queue.Empty:
            connection = None
        try:
            if connection is None:
                connection = self.engine.raw_connection()
            # Both drivers (sqlite3, psycopg) execute on the connection itself.
            row = connection.dbapi_connection.execute(HEAD_SQL).fetchone()
        except Exception as error:
            if connection is not None:
                connection.invalidate()
            raise CatalogueUnavailable(f"cannot read the catalogue at "
                                       f"{describe(self.catalogue.url)}: {error}") from None
        self._idle_connections.put(connection)
        return row[0] if row else 0

    def _forget_if_moved(self, value: int) -> None:
        with self._lock:
            if value != self._generation:
                self._forget(value)

    def _forget(self, value: int) -> None:
        self._standings.clear()
        self._holders.clear()
        self._generation = value

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

    def connections_in_use(self) -> int:
        """Reading connections checked out now, not counting the idle ones kept for the head."""
        pool = self.engine.pool
        assert isinstance(pool, QueuePool)  # read_engine pools every connection it makes
        return pool.checkedout() - self._idle_connections.qsize()

    def close(self) -> None:
        while not self._idle_connections.empty():
            self._idle_connections.get_nowait().close()
        self.engine.dispose()
