"""Fixtures for the API tests: a catalogue with the Brackwater people and one token per role,
on SQLite and, when configured, on PostgreSQL.

Overrides the root `catalogue_url`: on SQLite each test gets a copy of one catalogue prepared
once per session (init, roles, tokens), which keeps the suite quick; on PostgreSQL each test
prepares its own schema.
"""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest
from sqlalchemy.engine import make_url

from tests.api.api_helpers import Api, make_tokens, open_api
from tests.catalogue.stage_helpers import set_up_people
from tests.conftest import Cli, run_cli

SECRETS: dict[str, dict[str, str]] = {}  # catalogue URL -> role -> token secret


def _prepare(url: str) -> dict[str, str]:
    result = run_cli(["--db", url, "init"])
    assert result.exit_code == 0, result.output
    set_up_people(Cli(url))
    return make_tokens(url)


@pytest.fixture(scope="session")
def prepared_sqlite(tmp_path_factory) -> tuple[Path, dict[str, str]]:
    path = tmp_path_factory.mktemp("prepared") / "catalogue.db"
    return path, _prepare(f"sqlite:///{path}")


@pytest.fixture
def catalogue_url(empty_catalogue_url: str, request) -> str:
    if make_url(empty_catalogue_url).get_backend_name() == "sqlite":
        template, secrets = request.getfixturevalue("prepared_sqlite")
        target = Path(make_url(empty_catalogue_url).database)
        for suffix in ("", "-wal", "-shm"):
            if Path(f"{template}{suffix}").exists():
                shutil.copy(f"{template}{suffix}", f"{target}{suffix}")
    else:
        secrets = _prepare(empty_catalogue_url)
    SECRETS[empty_catalogue_url] = secrets
    return empty_catalogue_url


@pytest.fixture
def api(cli) -> Api:
    return open_api(cli.url, SECRETS[cli.url])
