"""What every request shares: the catalogue the app serves, opened once per process."""

from __future__ import annotations

import threading

from flask import Flask, current_app

from registry.store.catalogue import Catalogue, open_catalogue

EXTENSION = "lockkeeper.catalogue"
_opening = threading.Lock()


def catalogue() -> Catalogue:
    """Open on first use, so a server that forks its workers opens one engine per worker."""
    app = current_app
    opened = app.extensions.get(EXTENSION)
    if opened is None:
        with _opening:
            opened = app.extensions.get(EXTENSION)
            if opened is None:
                opened = open_catalogue(app.config.get("LOCKKEEPER_DB"))
                app.extensions[EXTENSION] = opened
    return opened


def close_catalogue(app: Flask) -> None:
    opened = app.extensions.pop(EXTENSION, None)
    if opened is not None:
        opened.close()
