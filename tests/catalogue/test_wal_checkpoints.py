"""A SQLite catalogue held open checkpoints on a thread after its writing commits: the log file
stays while the catalogue is open, every commit is durable and visible to others at once, and a
closed catalogue is one complete file again."""

from __future__ import annotations

import sqlite3
from contextlib import closing
from pathlib import Path

from registry.service.actors import Actor
from registry.service.roles import grant_role
from registry.store.catalogue import open_catalogue
from tests.conftest import run_cli

ADMIN = Actor("admin", frozenset({"admin"}))


def _users(file: Path) -> set[str]:
    with closing(sqlite3.connect(file)) as other:  # another connection, as another process
        return {name for (name,) in other.execute("SELECT DISTINCT user FROM role_grants")}


def test_commits_are_seen_at_once_and_a_closed_catalogue_is_one_file(tmp_path):
    file = tmp_path / "catalogue.db"
    assert run_cli(["--db", f"sqlite:///{file}", "init"]).exit_code == 0
    catalogue = open_catalogue(f"sqlite:///{file}")
    try:
        grant_role(catalogue, "admin", "admin", ADMIN)  # the first admin
        for user in ("ana", "ben", "cleo"):
            grant_role(catalogue, user, "publisher", ADMIN)
            assert user in _users(file)
        # the catalogue's own connection keeps the log, to be reused by the next write
        assert Path(f"{file}-wal").exists()
        with closing(sqlite3.connect(file)) as other:
            assert other.execute("PRAGMA wal_autocheckpoint").fetchone() == (1000,)
    finally:
        catalogue.close()
    assert not Path(f"{file}-wal").exists()  # the last close checkpointed and removed it
    assert {"ana", "ben", "cleo"} <= _users(file)
    catalogue.close()  # closing twice is harmless
