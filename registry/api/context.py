"""What every request shares: the catalogue the app serves, opened once per process."""

from __future__ import annotations

import threading
from collections.abc import Callable
from typing import TypeVar

from flask import Flask, current_app, g

from registry.service.cached_reads import CachedReads
from registry.service.change_watch import ChangeWatcher
from registry.store.catalogue import Catalogue, open_catalogue

EXTENSION = "lockkeeper.catalogue"
READS_EXTENSION = "lockkeeper.cached_reads"
WATCH_EXTENSION = "lockkeeper.change_watch"
DEFAULT_MAX_WAITING = 64  # requests one process may hold open waiting for a change
WEB_EXTENSION = "lockkeeper"  # registry.app's CatalogueHolder
_opening = threading.RLock()  # reentrant: making one object may open another
T = TypeVar("T")


def catalogue() -> Catalogue:
    """Open on first use, so a server that forks its workers opens one engine per worker."""
    app = current_app
    opened = app.extensions.get(EXTENSION)
    if opened is None:
        with _opening:
            opened = app.extensions.get(EXTENSION)
            if opened is None:
                opened = _shared_or_own(app)
                app.extensions[EXTENSION] = opened
    return opened


def _shared_or_own(app: Flask) -> Catalogue:
    """The web app's catalogue when the API shares its app and no URL of its own was given,
    so one process keeps one engine; otherwise the catalogue LOCKKEEPER_DB names."""
    holder = app.extensions.get(WEB_EXTENSION)
    if "LOCKKEEPER_DB" not in app.config and holder is not None and hasattr(holder, "catalogue"):
        return holder.catalogue()
    return open_catalogue(app.config.get("LOCKKEEPER_DB"))


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


def close_catalogue(app: Flask) -> None:
    reads = app.extensions.pop(READS_EXTENSION, None)
    if reads is not None:
        reads.close()
    opened = app.extensions.pop(EXTENSION, None)
    if opened is not None:
        opened.close()
