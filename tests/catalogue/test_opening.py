"""Opening the catalogue: bad URLs, unreachable servers, uninitialised files."""

from __future__ import annotations

from tests.conftest import run_cli


def _one_line(result):
    assert result.exit_code == 2, result.output
    assert len(result.stderr.strip().splitlines()) == 1, result.stderr
    return result.stderr


def test_invalid_database_url_is_a_clear_error():
    assert "invalid database URL" in _one_line(run_cli(["--db", "not a url", "model", "list"]))


def test_unsupported_database_is_a_clear_error():
    assert "unsupported database" in _one_line(run_cli(["--db", "mysql://x@127.0.0.1/db",
                                                        "model", "list"]))


def test_unreachable_postgresql_server_is_a_clear_error():
    # Port 9 on loopback (discard) has no PostgreSQL server.
    line = _one_line(run_cli(["--db", "postgresql+psycopg://nobody@127.0.0.1:9/none",
                              "model", "list"]))
    assert "cannot open the catalogue" in line


def test_uninitialised_catalogue_asks_for_init(tmp_path):
    line = _one_line(run_cli(["--db", f"sqlite:///{tmp_path}/fresh.db", "model", "list"]))
    assert "lockkeeper init" in line


def test_init_is_repeatable(empty_catalogue_url):
    assert run_cli(["--db", empty_catalogue_url, "init"]).exit_code == 0
    again = run_cli(["--db", empty_catalogue_url, "init", "--json"])
    assert again.exit_code == 0
