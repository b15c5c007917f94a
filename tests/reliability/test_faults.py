"""Faults: the PostgreSQL server going away and coming back, a full disk while a blob is
written, a read-only catalogue. Each gives one clear line and exit 2, and loses nothing."""

from __future__ import annotations

import os
import subprocess
import time

import pytest
from sqlalchemy import event
from sqlalchemy.exc import OperationalError

from tests.catalogue.stage_helpers import register
from tests.conftest import POSTGRES_URL, Cli
from tests.reliability.crash import large_registration, set_up
from tests.reliability.harness import (assert_catalogue_sound, is_clean_failure, read_state,
                                       run_lockkeeper)

pytestmark = pytest.mark.reliability


def _is_sqlite(url: str) -> bool:
    return url.startswith("sqlite")


# --- a full disk ----------------------------------------------------------------------------

def test_a_full_disk_while_writing_a_blob_leaves_the_catalogue_as_it_was(cli, tmp_path,
                                                                         monkeypatch):
    set_up(cli, tmp_path)
    register(cli, tmp_path, "small")
    before = read_state(cli.url)
    arguments = large_registration(4 * 1024 * 1024)(cli, tmp_path, 1)
    if _is_sqlite(cli.url):
        # SQLite's own size limit fails the write as a full disk does (SQLITE_FULL).
        from registry.store import catalogue as opening

        original = opening._configure_sqlite

        def limited(engine):
            original(engine)

            @event.listens_for(engine, "connect")
            def cap(dbapi_connection, _record):
                pages = dbapi_connection.execute("PRAGMA page_count").fetchone()[0]
                dbapi_connection.execute(f"PRAGMA max_page_count = {pages + 64}")

        monkeypatch.setattr(opening, "_configure_sqlite", limited)
    else:
        from registry.store.unit_of_work import BlobStore

        def full_disk(self, content):
            raise OperationalError("INSERT INTO blobs", {}, OSError(
                "could not extend file: No space left on device"))

        monkeypatch.setattr(BlobStore, "put", full_disk)
    result = cli(*arguments)
    assert result.exit_code == 2, result.output
    assert len(result.stderr.strip().splitlines()) == 1 and "nothing was changed" in result.stderr
    monkeypatch.undo()
    assert assert_catalogue_sound(cli.url) == before
    assert cli.json(*arguments)["created"] is True  # with room again, the same command works


# --- a read-only catalogue ------------------------------------------------------------------

def test_a_read_only_catalogue_file_gives_a_clear_error_and_still_answers_reads(cli, tmp_path):
    if not _is_sqlite(cli.url):
        pytest.skip("a read-only catalogue file is a SQLite matter")
    set_up(cli, tmp_path)
    register(cli, tmp_path, "small")
    before = read_state(cli.url)
    path = cli.url.removeprefix("sqlite:///")
    read_only = Cli(f"sqlite:///file:{path}?mode=ro&uri=true")
    assert read_only.json("status", "m")
    document, manifest = (tmp_path / "small" / "model.bin"), (tmp_path / "small" / "manifest.toml")
    document.write_bytes(b"other bytes")
    result = read_only("register", "m", str(document), "--manifest", str(manifest))
    assert result.exit_code == 2, result.output
    assert result.stderr.startswith("lockkeeper: ") and "read-only" in result.stderr
    assert len(result.stderr.strip().splitlines()) == 1
    assert read_state(cli.url) == before


# --- the PostgreSQL server stopped and started ----------------------------------------------

def _cluster(action: str, *options: str) -> None:
    version = os.listdir("/etc/postgresql")[0]
    subprocess.run(["pg_ctlcluster", "--skip-systemctl-redirect", version, "main", action,
                    *options], check=True, capture_output=True, timeout=120)


def _wait_for_server(url: str, seconds: float = 60) -> None:
    deadline = time.monotonic() + seconds
    while time.monotonic() < deadline:
        if run_lockkeeper(url, "status", "m").returncode == 0:
            return
        time.sleep(0.5)
    raise AssertionError("the server did not come back")


@pytest.mark.skipif(os.environ.get("LOCKKEEPER_TEST_PG_RESTART") != "1" or not POSTGRES_URL,
                    reason="stops this machine's PostgreSQL server: set "
                           "LOCKKEEPER_TEST_PG_RESTART=1 and LOCKKEEPER_TEST_POSTGRES_URL")
@pytest.mark.timeout(600)
def test_the_postgresql_server_stopped_and_started_mid_run_loses_nothing(cli, tmp_path):
    if _is_sqlite(cli.url):
        pytest.skip("a PostgreSQL server matter")
    set_up(cli, tmp_path)
    for tag in ("a", "b"):
        register(cli, tmp_path, tag)
    before = assert_catalogue_sound(cli.url)
    arguments = large_registration(24 * 1024 * 1024)(cli, tmp_path, 1)
    from tests.reliability.harness import lockkeeper_command, process_env

    from tests.reliability.harness import write_transaction_open

    in_flight = subprocess.Popen(lockkeeper_command(cli.url, *arguments),
                                 env=process_env(PGAPPNAME="lockkeeper-in-flight"),
                                 stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True)
    # Stop the server while the registration holds its write transaction open.
    while in_flight.poll() is None and not write_transaction_open(cli.url,
                                                                  "lockkeeper-in-flight"):
        time.sleep(0.005)
    _cluster("stop", "--", "-m", "fast")
    try:
        _, in_flight_error = in_flight.communicate(timeout=300)
        reads = [run_lockkeeper(cli.url, "status", "m"), run_lockkeeper(cli.url, "audit",
                                                                         "verify")]
        writes = [run_lockkeeper(cli.url, *arguments)]
    finally:
        _cluster("start")
    # While the server was away: one clear line and exit 2, for reads and writes alike.
    for done in reads + writes:
        assert done.returncode == 2 and is_clean_failure(done.stderr), done.stderr
        assert "catalogue" in done.stderr
    assert in_flight.returncode in (0, 2) and (in_flight.returncode == 0 or is_clean_failure(
        in_flight_error)), in_flight_error
    _wait_for_server(cli.url)
    after = assert_catalogue_sound(cli.url)
    change = after.delta(before)
    assert change == {} or in_flight.returncode == 0, change  # nothing half-written
    again = run_lockkeeper(cli.url, *arguments)
    assert again.returncode == 0, again.stderr
    print(f"in flight: exit {in_flight.returncode} {in_flight_error.strip()!r}; while stopped: "
          f"{[d.stderr.strip() for d in reads + writes]}")
