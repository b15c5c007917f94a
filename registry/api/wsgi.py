"""The WSGI entry point for production servers: `gunicorn registry.api.wsgi:app`.

The catalogue is LOCKKEEPER_DB; LOCKKEEPER_OPEN_READS=1 lets requests without a token read;
LOCKKEEPER_MAX_WAITING caps the requests one process holds open for `?wait=` (default 64);
LOCKKEEPER_DOCUMENT_CACHE is the folder of the server's checked copies of large documents
(default ~/.cache/lockkeeper/documents; `off` for none), LOCKKEEPER_DOCUMENT_CACHE_BYTES its
size (default 1 GiB). Run
threaded workers (`--worker-class gthread --threads N`) when clients wait: each waiting request
holds a thread.
"""

from __future__ import annotations

import os

from registry.app import create_app
from registry.service.document_cache import folder_setting

app = create_app(os.environ.get("LOCKKEEPER_DB"), pages=False, config={
    "LOCKKEEPER_OPEN_READS": os.environ.get("LOCKKEEPER_OPEN_READS", "") in ("1", "true", "True"),
    **({"LOCKKEEPER_MAX_WAITING": int(os.environ["LOCKKEEPER_MAX_WAITING"])}
       if os.environ.get("LOCKKEEPER_MAX_WAITING", "").isdigit() else {}),
    "LOCKKEEPER_DOCUMENT_CACHE": folder_setting(os.environ.get("LOCKKEEPER_DOCUMENT_CACHE")),
    **({"LOCKKEEPER_DOCUMENT_CACHE_BYTES": int(os.environ["LOCKKEEPER_DOCUMENT_CACHE_BYTES"])}
       if os.environ.get("LOCKKEEPER_DOCUMENT_CACHE_BYTES", "").isdigit() else {}),
})
