"""The lineage browser: a read-only Flask blueprint with server-rendered pages and SVG.

Register it with `create_app` in registry/app.py; it needs `app.extensions["lockkeeper"]`,
the open catalogue.
"""

from flask import Blueprint

blueprint = Blueprint("web", __name__, template_folder="templates", static_folder="static",
                      static_url_path="/static")

from web import after_release, readable, views  # noqa: E402,F401 - pages, filters and routes attach themselves
