"""Thread pools made on first use and kept for the life of the process.

A command that never needs a pool starts no thread, and one that does makes it once: the
callers of one name share the pool (each name is one kind of work, its threads named after it).
"""

from __future__ import annotations

import threading
from concurrent.futures import ThreadPoolExecutor

_POOLS: dict[str, ThreadPoolExecutor] = {}
_LOCK = threading.Lock()


def shared_pool(name: str, workers: int = 1) -> ThreadPoolExecutor:
    """The process's pool `name` of `workers` threads. A pool of one thread runs its tasks in
    the order they were given."""
    with _LOCK:
        pool = _POOLS.get(name)
        if pool is None:
            pool = _POOLS[name] = ThreadPoolExecutor(max_workers=workers,
                                                     thread_name_prefix=name)
        return pool
