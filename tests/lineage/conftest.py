"""One Brackwater catalogue per database for the tests that only read it."""

from __future__ import annotations

import uuid
from urllib.parse import quote

import pytest

from tests.conftest import BACKENDS, POSTGRES_URL, Cli, _assert_loopback, run_cli
from tests.lineage.scenario import build_brackwater


@pytest.fixture(scope="module", params=BACKENDS)
def shared_url(request, tmp_path_factory):
    """A populated catalogue kept for a whole module; tests that write use `catalogue`."""
    if request.param == "sqlite":
        url = f"sqlite:///{tmp_path_factory.mktemp('lineage') / 'catalogue.db'}"
        schema = None
    else:
        import psycopg
        from sqlalchemy.engine import make_url

        _assert_loopback(POSTGRES_URL)
        schema = f"t_{uuid.uuid4().hex[:16]}"
        conninfo = make_url(POSTGRES_URL).set(drivername="postgresql").render_as_string(
            hide_password=False)
        with psycopg.connect(conninfo, autocommit=True) as connection:
            connection.execute(f'CREATE SCHEMA "{schema}"')
        separator = "&" if "?" in POSTGRES_URL else "?"
        url = f"{POSTGRES_URL}{separator}options={quote(f'-csearch_path={schema}')}"
    assert run_cli(["--db", url, "init"]).exit_code == 0
    from registry.store.catalogue import open_catalogue

    catalogue = open_catalogue(url)
    build_brackwater(catalogue)
    catalogue.close()
    yield url
    if schema is not None:
        with psycopg.connect(conninfo, autocommit=True) as connection:
            connection.execute(f'DROP SCHEMA "{schema}" CASCADE')


@pytest.fixture(scope="module")
def shared(shared_url):
    from registry.store.catalogue import open_catalogue

    catalogue = open_catalogue(shared_url)
    yield catalogue
    catalogue.close()


@pytest.fixture
def shared_cli(shared_url) -> Cli:
    return Cli(shared_url)
