"""SQLite's checkpoints taken off the writer's path while a catalogue is held open.

A commit in WAL mode is durable once the write-ahead log is synced (synchronous = FULL); copying
its pages into the database file, the checkpoint, can come later. Left to itself SQLite
checkpoints in the committing connection once the log passes 1,000 pages, and again, deleting
the log, when the last connection to the file closes: with a connection per unit of work, a
transaction writing 16 MB of served rows also wrote and synced them a second time into the
database file, and created the log afresh, before it returned (measured: about 160 ms where the
durable commit alone takes 70 ms).

So a catalogue file held open keeps one connection of its own, opened after its first writing
commit, which keeps the log in place to be reused, and checkpoints through it on a thread after
each writing commit (PASSIVE: it never waits for nor blocks a writer or a reader). The
catalogue's own connections do not checkpoint on commit. Closing the catalogue waits for a
checkpoint under way and closes that connection, the last one, so SQLite checkpoints what is
left and removes the log as before: a closed catalogue is one complete file.
"""

from __future__ import annotations

import os
import sqlite3
import threading
from concurrent.futures import Future
from pathlib import Path

from registry.thread_pools import shared_pool


class WalCheckpoints:
    """The checkpoints of one SQLite catalogue file, taken after its writing commits."""

    def __init__(self, file: Path) -> None:
        self._file = Path(os.path.abspath(file))
        self._lock = threading.Lock()
        self._connection: sqlite3.Connection | None = None
        self._pid = os.getpid()  # a forked child never uses its parent's connection
        self._running: Future[None] | None = None
        self._again = False
        self._closed = False

    def after_commit(self) -> None:
        """Called by a writing unit of work once its commit is durable, before it closes its
        own connection (so that closing it is never the last close, which would checkpoint)."""
        with self._lock:
            if self._closed:
                return
            if self._connection is None or self._pid != os.getpid():
                self._pid = os.getpid()
                try:
                    self._connection = self._open()
                except sqlite3.Error:  # the commit stands; SQLite checkpoints at close
                    self._connection = None
                    return
            if self._running is not None and not self._running.done():
                self._again = True  # the one under way runs once more when it is done
                return
            self._running = shared_pool("wal-checkpoint").submit(self._checkpoint)

    def _open(self) -> sqlite3.Connection:
        connection = sqlite3.connect(self._file, check_same_thread=False, isolation_level=None)
        # Reading the schema's version joins the file's WAL, so the log outlives the
        # writer's connection from now on.
        connection.execute("PRAGMA schema_version").fetchall()
        return connection

    def _checkpoint(self) -> None:
        while True:
            with self._lock:
                connection, self._again = self._connection, False
            if connection is None:
                return
            try:
                connection.execute("PRAGMA wal_checkpoint(PASSIVE)").fetchall()
            except sqlite3.Error:
                pass  # what is not copied now is copied after the next commit, or at close
            with self._lock:
                if not self._again or self._closed:
                    return

    def close(self) -> None:
        with self._lock:
            self._closed = True
            running = self._running
        if running is not None:
            running.result()
        with self._lock:
            connection, self._connection = self._connection, None
        if connection is not None and self._pid == os.getpid():
            connection.close()
