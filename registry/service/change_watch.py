"""Holding requests until the catalogue changes, in one server process.

Every change to the catalogue appends to the audit log, so the audit head's sequence number
moves whenever anything changes, whichever process made the change. One thread per process
reads the head a few times a second while at least one request waits, and wakes the waiting
requests when it moved; they then ask again whether what they watch changed. Waiting requests
hold no database connection: only the watching thread reads, one short read at a time.
"""

from __future__ import annotations

import threading
import time
from collections.abc import Callable, Iterator
from contextlib import contextmanager

POLL_INTERVAL = 0.2  # seconds between reads of the audit head while someone waits


class TooManyWaiting(Exception):
    """The process already holds as many waiting requests as it may."""


class ChangeWatcher:
    def __init__(self, read_generation: Callable[[], int], *, max_waiting: int,
                 poll_interval: float = POLL_INTERVAL) -> None:
        self._read_generation = read_generation
        self.max_waiting = max_waiting
        self._poll_interval = poll_interval
        self._changed = threading.Condition()
        self._waiting = 0
        self._latest: int | None = None
        self._thread: threading.Thread | None = None

    @property
    def waiting(self) -> int:
        return self._waiting

    @contextmanager
    def admitted(self) -> Iterator[None]:
        """Count one waiting request for as long as the block runs; TooManyWaiting if full."""
        with self._changed:
            if self._waiting >= self.max_waiting:
                raise TooManyWaiting()
            self._waiting += 1
            self._start_thread()
            self._changed.notify_all()  # wakes the watching thread if it was idle
        try:
            yield
        finally:
            with self._changed:
                self._waiting -= 1

    def wait_past(self, generation: int, timeout: float) -> int:
        """Block until the catalogue's generation is no longer `generation`, or `timeout`
        seconds pass; return the newest generation seen. Call inside `admitted()`."""
        deadline = time.monotonic() + timeout
        with self._changed:
            while self._latest is None or self._latest == generation:
                remaining = deadline - time.monotonic()
                if remaining <= 0:
                    break
                self._changed.wait(remaining)
            return generation if self._latest is None else self._latest

    def _start_thread(self) -> None:
        if self._thread is None or not self._thread.is_alive():
            self._thread = threading.Thread(target=self._watch, name="lockkeeper-change-watch",
                                            daemon=True)
            self._thread.start()

    def _watch(self) -> None:
        while True:
            with self._changed:
                while self._waiting == 0:
                    self._latest = None  # nobody watched meanwhile: read afresh before trusting
                    self._changed.wait()
            try:
                value = self._read_generation()
            except Exception:  # the catalogue is briefly away: waiters time out as usual
                value = None
            if value is not None:
                with self._changed:
                    if value != self._latest:
                        self._latest = value
                        self._changed.notify_all()
            time.sleep(self._poll_interval)
