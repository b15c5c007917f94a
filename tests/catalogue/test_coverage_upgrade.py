"""Upgrading a catalogue of the first release brings its rows under the chain, once: from then
on an edit of any of them is found, though the release that wrote them could not have told."""

from __future__ import annotations

import json
import shutil
import sqlite3
from pathlib import Path

from tests.conftest import run_cli

FIXTURE = Path(__file__).parent / "fixtures" / "demo-catalogue-rev0001.db"


def test_an_upgraded_catalogue_covers_its_earlier_rows_once(tmp_path):
    target = tmp_path / "catalogue.db"
    shutil.copy(FIXTURE, target)
    url = f"sqlite:///{target}"
    first = json.loads(run_cli(["--db", url, "init", "--json"]).stdout)
    assert first["revision_before"] == "0001" and first["rows_brought_under_the_chain"] > 0
    again = json.loads(run_cli(["--db", url, "init", "--json"]).stdout)
    assert again["rows_brought_under_the_chain"] == 0
    with sqlite3.connect(target) as connection:
        connection.execute("UPDATE stage_holdings SET version_id = 2 WHERE stage = 'live' "
                           "AND version_id = 1")
    result = run_cli(["--db", url, "audit", "verify", "--json"])
    assert result.exit_code == 1
    report = json.loads(result.stdout)
    assert report["findings"][0]["table"] == "stage_holdings"
    assert report["findings"][0]["column"] == "version_id"
