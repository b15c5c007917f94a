"""The hot path's cache: never misses a change committed before a request, and shares reads."""

from __future__ import annotations

import threading
import time

import pytest

from registry.errors import Conflict
from registry.service import models
from registry.service.cached_reads import CachedReads
from registry.store.unit_of_work import UnitOfWork

from tests.api.api_helpers import ADMIN


def _head(catalogue) -> int:
    from registry.store import tables as t

    with UnitOfWork(catalogue, write=False) as uow:
        head = uow.session.get(t.AuditHead, 1)
        return head.sequence if head else 0


@pytest.mark.parametrize("shares_reads", [True, False], ids=["shared", "own"])
def test_every_caller_sees_the_changes_committed_before_it_called(catalogue, shares_reads):
    reads = CachedReads(catalogue)
    reads._shares_reads = shares_reads  # as on PostgreSQL, or as on SQLite
    failures: list[str] = []
    # The very first write creates the audit head; concurrent first writers would conflict.
    models.create_model(catalogue, "first", "", ADMIN)

    def writer_then_reader(index: int) -> None:
        for round_ in range(4):
            try:
                models.create_model(catalogue, f"m-{index}-{round_}", "", ADMIN)
            except Conflict:
                continue  # PostgreSQL: a write that lost a race; nothing to check
            committed = _head(catalogue)
            seen = reads.generation()
            if seen < committed:
                failures.append(f"saw {seen} after {committed} was committed")

    threads = [threading.Thread(target=writer_then_reader, args=(i,)) for i in range(6)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join()
    reads.close()
    assert failures == []


def test_concurrent_callers_share_reads_of_the_audit_head(catalogue):
    reads = CachedReads(catalogue)
    reads._shares_reads = True  # what a server database gets
    real_read = reads._read_head
    count = [0]

    def slow_read() -> int:
        count[0] += 1
        time.sleep(0.05)
        return real_read()

    reads._read_head = slow_read
    start = threading.Barrier(24)

    def caller() -> None:
        start.wait()
        for _ in range(5):
            reads.generation()

    threads = [threading.Thread(target=caller) for _ in range(24)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join()
    reads.close()
    assert count[0] < 24 * 5 / 3  # 120 calls; shared reads make a small fraction of that
