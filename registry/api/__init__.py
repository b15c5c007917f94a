"""The JSON API under /api/v1: a thin shell over the same use cases as the CLI.

`register_api(app)` adds it to any Flask app (the web app does); `create_api_app` makes an app
holding only the API, for tests, benchmarks and registry/api/wsgi.py.

Configuration (app.config):
  LOCKKEEPER_DB          the catalogue URL (default: LOCKKEEPER_DB in the environment, then
                         the default SQLite file)
  LOCKKEEPER_OPEN_READS  True lets requests without a token read (default False: every read
                         needs a token of any role)
  LOCKKEEPER_MAX_WAITING how many requests one process holds open waiting for a change
                         (`?wait=`); more get 503 with Retry-After (default 64)
  MAX_CONTENT_LENGTH     the largest body accepted, in bytes (default 64 MiB); larger uploads
                         get 413 before their body is read
"""

from __future__ import annotations

from typing import Any

from flask import Flask

DEFAULT_MAX_CONTENT_LENGTH = 64 * 1024 * 1024


def register_api(app: Flask) -> None:
    """Add the API to `app`. Call it after the app's own error handlers are registered, so
    that routing errors under /api/ stay problem documents and other paths keep the app's
    pages. Without LOCKKEEPER_DB in app.config the API uses the catalogue of registry.app's
    holder when there is one (one engine per process)."""
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


def create_api_app(catalogue_url: str | None = None, *, config: dict[str, Any] | None = None
                   ) -> Flask:
    app = Flask("registry.api", static_folder=None)
    if catalogue_url is not None:
        app.config["LOCKKEEPER_DB"] = catalogue_url
    app.config.update(config or {})
    register_api(app)
    return app
