"""Shared fixtures: a fresh catalogue per test on SQLite, and on PostgreSQL when configured.

Set LOCKKEEPER_TEST_POSTGRES_URL (a loopback server only) to run every catalogue test on both;
each PostgreSQL test gets a schema of its own, dropped afterwards.
"""

from __future__ import annotations

import json
import os
import uuid
from collections.abc import Iterator
from urllib.parse import quote

import pytest
from click.testing import CliRunner, Result

from registry.cli import main

POSTGRES_URL = os.environ.get("LOCKKEEPER_TEST_POSTGRES_URL")
BACKENDS = ["sqlite"] + (["postgresql"] if POSTGRES_URL else [])


def _assert_loopback(url: str) -> None:
    from sqlalchemy.engine import make_url

    host = make_url(url).host or "localhost"
    assert host in ("127.0.0.1", "localhost", "::1"), "tests only ever talk to loopback"


@pytest.fixture
def empty_catalogue_url(request, tmp_path) -> Iterator[str]:
    """A URL for a catalogue that does not exist yet (SQLite) or an empty schema (PostgreSQL)."""
    backend = getattr(request, "param", "sqlite")
    if backend == "sqlite":
        yield f"sqlite:///{tmp_path / 'catalogue.db'}"
        return
    import psycopg
    from sqlalchemy.engine import make_url

    assert POSTGRES_URL
    _assert_loopback(POSTGRES_URL)
    schema = f"t_{uuid.uuid4().hex[:16]}"
    base = make_url(POSTGRES_URL)
    conninfo = base.set(drivername="postgresql").render_as_string(hide_password=False)
    with psycopg.connect(conninfo, autocommit=True) as connection:
        connection.execute(f'CREATE SCHEMA "{schema}"')
    separator = "&" if "?" in POSTGRES_URL else "?"
    yield f"{POSTGRES_URL}{separator}options={quote(f'-csearch_path={schema}')}"
    with psycopg.connect(conninfo, autocommit=True) as connection:
        connection.execute(f'DROP SCHEMA "{schema}" CASCADE')


@pytest.fixture(autouse=True)
def signing_key_file(tmp_path, monkeypatch):
    """Each test's own signing key location (no file until a test makes one), so no test
    picks up a key from the working folder, which PostgreSQL catalogues would share."""
    path = tmp_path / "keys" / "signing.key"
    monkeypatch.setenv("LOCKKEEPER_SIGNING_KEY", str(path))
    return path


def pytest_generate_tests(metafunc):
    # Every test that asks for a catalogue runs once per configured database.
    for name in ("empty_catalogue_url", "catalogue_url"):
        if name in metafunc.fixturenames:
            metafunc.parametrize("empty_catalogue_url", BACKENDS, indirect=True)
            break


@pytest.fixture
def catalogue_url(empty_catalogue_url: str) -> str:
    result = run_cli(["--db", empty_catalogue_url, "init"])
    assert result.exit_code == 0, result.output
    return empty_catalogue_url


@pytest.fixture
def catalogue(catalogue_url: str):
    from registry.store.catalogue import open_catalogue

    opened = open_catalogue(catalogue_url)
    yield opened
    opened.close()


def run_cli(arguments: list[str], *, user: str = "ines.okafor") -> Result:
    return CliRunner().invoke(main, arguments, env={"LOCKKEEPER_USER": user},
                              catch_exceptions=False)


class Cli:
    """Runs `lockkeeper --db URL ...` in-process; `json()` parses the single JSON document."""

    def __init__(self, url: str) -> None:
        self.url = url

    def __call__(self, *arguments: str, user: str = "ines.okafor") -> Result:
        return run_cli(["--db", self.url, *arguments], user=user)

    def json(self, *arguments: str, user: str = "ines.okafor", expect: int = 0):
        result = self(*arguments, "--json", user=user)
        assert result.exit_code == expect, result.output
        return json.loads(result.stdout)


@pytest.fixture
def cli(catalogue_url: str) -> Cli:
    return Cli(catalogue_url)
