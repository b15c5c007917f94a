"""What every request shares: the catalogue the app serves, opened once per process."""

from __future__ import annotations

import threading
from collections.abc import Callable
from pathlib import Path
from typing import TypeVar

from flask import current_app, g

from registry.service.cached_reads import CachedReads
from registry.service.change_watch import ChangeWatcher
from registry.service.document_cache import DEFAULT_MAX_BYTES, DocumentCache
from registry.store.catalogue import Catalogue

READS_EXTENSION = "lockkeeper.cached_reads"
WATCH_EXTENSION = "lockkeeper.change_watch"
CACHE_EXTENSION = "lockkeeper.document_cache"
DEFAULT_MAX_WAITING = 64  # requests one process may hold open waiting for a change
HOLDER_EXTENSION = "lockkeeper"  # registry/app.py's CatalogueHolder, shared with the pages
_opening = threading.RLock()  # reentrant: making one object may open another
T = TypeVar("T")


def catalogue() -> Catalogue:
    """The app's catalogue, opened on first use, so a server that forks its workers opens one
    engine per worker."""
    return current_app.extensions[HOLDER_EXTENSION].catalogue()


def _once_per_app(key: str, make: Callable[[], T]) -> T:
    """The app's one `key` object, made on first use (`make` may itself open others)."""
    app = current_app
    made = app.extensions.get(key)
    if made is None:
        with _opening:
            made = app.extensions.get(key)
            if made is None:
                made = app.extensions[key] = make()
    return made


def cached_reads() -> CachedReads:
    return _once_per_app(READS_EXTENSION, lambda: CachedReads(catalogue()))


def change_watcher() -> ChangeWatcher:
    """The process's watcher of the audit head, for requests that wait for a change."""
    limit = int(current_app.config.get("LOCKKEEPER_MAX_WAITING", DEFAULT_MAX_WAITING))
    return _once_per_app(WATCH_EXTENSION,
                         lambda: ChangeWatcher(cached_reads().generation, max_waiting=limit))


def generation() -> int:
    """The catalogue's version, read once per request."""
    if "catalogue_generation" not in g:
        g.catalogue_generation = cached_reads().generation()
    return g.catalogue_generation


def document_cache() -> DocumentCache:
    """The process's copies of large documents: in the folder LOCKKEEPER_DOCUMENT_CACHE (unset
    or empty: none), at most LOCKKEEPER_DOCUMENT_CACHE_BYTES."""
    config = current_app.config

    def make() -> DocumentCache:
        folder = config.get("LOCKKEEPER_DOCUMENT_CACHE")
        if not folder:
            return DocumentCache.off()
        return DocumentCache(Path(folder), max_bytes=int(
            config.get("LOCKKEEPER_DOCUMENT_CACHE_BYTES", DEFAULT_MAX_BYTES)))

    return _once_per_app(CACHE_EXTENSION, make)
