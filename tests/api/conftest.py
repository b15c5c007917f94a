"""Fixtures for the API tests: an app over a fresh catalogue (SQLite, and PostgreSQL when set)."""

from __future__ import annotations

import pytest

from tests.api.api_helpers import Api, make_api


@pytest.fixture
def api(cli) -> Api:
    return make_api(cli)
