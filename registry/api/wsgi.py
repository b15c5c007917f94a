"""The WSGI entry point for production servers: `gunicorn registry.api.wsgi:app`.

The catalogue is LOCKKEEPER_DB; LOCKKEEPER_OPEN_READS=1 lets requests without a token read.
"""

from __future__ import annotations

import os

from registry.api import create_api_app

app = create_api_app(os.environ.get("LOCKKEEPER_DB"), config={
    "LOCKKEEPER_OPEN_READS": os.environ.get("LOCKKEEPER_OPEN_READS", "") in ("1", "true", "True"),
})
