"""A new SQLite catalogue takes 16 KiB pages; an older one keeps its own, and SQLite's rebuild
(DEVELOPERS.md) moves it to 16 KiB pages with every row, so the audit chain still verifies."""

from __future__ import annotations

import sqlite3
from datetime import timedelta

from tests.after_release.served_files import now, shadow_day
from tests.catalogue.stage_helpers import register, set_up_model
from tests.conftest import Cli


def _page_size(path) -> int:
    with sqlite3.connect(path) as connection:
        return connection.execute("PRAGMA page_size").fetchone()[0]


def _catalogue_with_served_rows(cli: Cli, tmp_path) -> None:
    assert cli("init").exit_code == 0
    set_up_model(cli, tmp_path, {})
    register(cli, tmp_path, "v1")
    for stage in ("shadow", "canary", "live"):
        cli.json("promote", "m", "1", "--to", stage, user="tomas.lindqvist")
    path, _ = shadow_day(tmp_path / "day.parquet", now() + timedelta(milliseconds=5), 3000,
                         versions=(1,))
    assert cli.json("serving", "record", "m", str(path))["recorded"]


def test_a_new_catalogue_takes_16_kib_pages(tmp_path):
    file = tmp_path / "new.db"
    _catalogue_with_served_rows(Cli(f"sqlite:///{file}"), tmp_path)
    assert _page_size(file) == 16384


def test_an_older_catalogue_keeps_its_pages_until_rebuilt_and_verifies_after(tmp_path):
    file = tmp_path / "old.db"
    # a file made with 4 KiB pages (SQLite's default), as earlier releases made them
    with sqlite3.connect(file) as connection:
        connection.executescript("PRAGMA page_size = 4096; CREATE TABLE t (x); DROP TABLE t;")
    cli = Cli(f"sqlite:///{file}")
    _catalogue_with_served_rows(cli, tmp_path)
    assert _page_size(file) == 4096
    before = cli.json("audit", "verify")
    connection = sqlite3.connect(file, isolation_level=None)
    for statement in ("PRAGMA journal_mode=DELETE", "PRAGMA page_size=16384", "VACUUM",
                      "PRAGMA journal_mode=WAL"):
        connection.execute(statement).fetchall()
    connection.close()
    assert _page_size(file) == 16384
    after = cli.json("audit", "verify")
    assert after["ok"] and before["ok"] and after["rows"] == before["rows"]
    assert cli.json("serving", "report", "m")["versions"]["1"]["rows"] == 3000
