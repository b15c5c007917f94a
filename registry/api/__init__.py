"""The JSON API under /api/v1: a thin shell over the same use cases as the CLI.

`register_api(app)` adds it to the app registry/app.py `create_app` makes (with the pages, or
alone with `pages=False`); the catalogue is the one that app's holder opens.

Configuration (app.config):
  LOCKKEEPER_DB          the catalogue URL when create_app is given none (default:
                         LOCKKEEPER_DB in the environment, then the default SQLite file)
  LOCKKEEPER_OPEN_READS  True lets requests without a token read (default False: every read
                         needs a token of any role)
  LOCKKEEPER_MAX_WAITING how many requests one process holds open waiting for a change
                         (`?wait=`); more get 503 with Retry-After (default 64)
  LOCKKEEPER_DOCUMENT_CACHE the folder of the server's checked copies of large documents
                         (default: none; the production entry points give one)
  LOCKKEEPER_DOCUMENT_CACHE_BYTES the most disk those copies use (default 1 GiB)
  MAX_CONTENT_LENGTH     the largest body accepted, in bytes (default 64 MiB); larger uploads
                         get 413 before their body is read
"""

from __future__ import annotations

from flask import Flask

DEFAULT_MAX_CONTENT_LENGTH = 64 * 1024 * 1024


def register_api(app: Flask) -> None:
    """Add the API to `app`. Call it after the app's own error handlers are registered, so
    that routing errors under /api/ stay problem documents and other paths keep the app's
    pages."""
    from registry.api import routes  # noqa: F401 - registers every route on the blueprint
    from registry.api.complete_bodies import CompleteBodies
    from registry.api.problems import install_app_problem_handler
    from registry.api.routing import api

    # Flask's own defaults hold MAX_CONTENT_LENGTH = None, so setdefault would never set it.
    if app.config.get("MAX_CONTENT_LENGTH") is None:
        app.config["MAX_CONTENT_LENGTH"] = DEFAULT_MAX_CONTENT_LENGTH
    app.config.setdefault("LOCKKEEPER_OPEN_READS", False)
    app.register_blueprint(api)
    install_app_problem_handler(app)
    if not isinstance(app.wsgi_app, CompleteBodies):
        app.wsgi_app = CompleteBodies(app.wsgi_app)  # type: ignore[method-assign]
