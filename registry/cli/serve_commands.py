"""`lockkeeper serve`: the lineage browser (and later the API) under gunicorn, on loopback."""

from __future__ import annotations

import ipaddress

import click

from registry.cli.output import warn
from registry.errors import UserError


def _is_loopback(host: str) -> bool:
    if host == "localhost":
        return True
    try:
        return ipaddress.ip_address(host).is_loopback
    except ValueError:
        return False


def gunicorn_application(app, options: dict):
    """A gunicorn application that serves an already-built Flask app."""
    from gunicorn.app.base import BaseApplication

    class LockkeeperServer(BaseApplication):
        def load_config(self) -> None:
            for key, value in options.items():
                self.cfg.set(key, value)

        def load(self):
            return app

    return LockkeeperServer()


@click.command()
@click.option("--host", default="127.0.0.1", show_default=True,
              help="Address to listen on; keep loopback unless a proxy in front checks access.")
@click.option("--port", type=click.IntRange(1, 65535), default=8765, show_default=True)
@click.option("--workers", type=click.IntRange(1, 64), default=2, show_default=True,
              help="gunicorn worker processes.")
@click.option("--threads", type=click.IntRange(2, 1024), default=32, show_default=True,
              help="Threads per worker; requests waiting for a change (?wait=) each hold one, "
                   "up to three quarters of them.")
@click.option("--document-cache", metavar="FOLDER|off", default=None,
              help="Where the server keeps checked copies of large documents it hands out "
                   "[default: ~/.cache/lockkeeper/documents]; off for none.")
@click.option("--document-cache-mib", type=click.IntRange(1, 1 << 24), default=1024,
              show_default=True, help="The most disk those copies may use, in MiB.")
def serve(host: str, port: int, workers: int, threads: int, document_cache: str | None,
          document_cache_mib: int) -> None:
    """Serve the read-only lineage browser at http://HOST:PORT/ (gunicorn)."""
    from registry.app import create_app
    from registry.service.document_cache import folder_setting
    from registry.store.catalogue import open_catalogue

    context = click.get_current_context().obj
    # Fail here, with a one-line message, rather than in every worker on its first request.
    open_catalogue(context.db_url).close()
    if not host or any(c.isspace() for c in host):
        raise UserError(f"invalid host {host!r}", place="--host")
    if not _is_loopback(host):
        warn(f"lockkeeper: serving on {host}, beyond this machine; the pages have no login")
    # Waiting requests may take three quarters of the threads; the rest answer everyone else.
    app = create_app(context.db_url, config={
        "LOCKKEEPER_MAX_WAITING": max(1, threads * 3 // 4),
        "LOCKKEEPER_DOCUMENT_CACHE": folder_setting(document_cache),
        "LOCKKEEPER_DOCUMENT_CACHE_BYTES": document_cache_mib << 20})
    warn(f"lockkeeper: serving the catalogue on http://{host}:{port}/ with {workers} worker(s)")
    gunicorn_application(app, {"bind": f"{host}:{port}", "workers": workers,
                               "worker_class": "gthread", "threads": threads,
                               "accesslog": "-", "errorlog": "-", "loglevel": "warning",
                               "timeout": 60}).run()
