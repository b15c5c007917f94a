"""A catalogue made by an earlier release upgrades in place and keeps working: every page, every
`--json` read and `audit verify`.

fixtures/demo-catalogue-rev0001.db is the demo catalogue as `lockkeeper demo` built it at
migration revision 0001 (the first release), committed as it was made. Never regenerate it: it
stands for the catalogues people already have.
"""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest

from registry.app import create_app
from tests.conftest import run_cli

FIXTURE = Path(__file__).parent / "fixtures" / "demo-catalogue-rev0001.db"
MODEL = "main-burst-risk"
TELEMETRY = "brackwater-telemetry-extract"


@pytest.fixture(scope="module")
def upgraded(tmp_path_factory) -> str:
    target = tmp_path_factory.mktemp("upgrade") / "catalogue.db"
    shutil.copy(FIXTURE, target)
    url = f"sqlite:///{target}"
    result = run_cli(["--db", url, "init", "--json"])
    assert result.exit_code == 0, result.output
    return url


def _json(url: str, *arguments: str):
    result = run_cli(["--db", url, *arguments, "--json"])
    assert result.exit_code == 0, (arguments, result.output)
    return json.loads(result.stdout)


def test_the_fixture_is_still_at_the_first_revision():
    import sqlite3

    with sqlite3.connect(FIXTURE) as connection:
        (revision,) = connection.execute("SELECT version_num FROM alembic_version").fetchone()
    assert revision == "0001"


def test_the_audit_chain_verifies_after_the_upgrade(upgraded):
    assert _json(upgraded, "audit", "verify")["ok"] is True


def test_every_read_command_answers_after_the_upgrade(upgraded):
    models = {m["name"] for m in _json(upgraded, "model", "list")["models"]}
    assert {MODEL, "night-flow-leak"} <= models
    assert _json(upgraded, "status", MODEL)["stages"]["live"] == [1]
    shown = _json(upgraded, "model", "show", MODEL)
    assert [v["number"] for v in shown["versions"]][:4] == [1, 2, 3, 4]
    history = _json(upgraded, "history", MODEL)
    assert any(event["stage"] == "live" for event in history["events"])
    datasets = {d["name"] for d in _json(upgraded, "dataset", "list")["datasets"]}
    assert TELEMETRY in datasets
    telemetry = _json(upgraded, "dataset", "show", TELEMETRY)
    assert telemetry["recalled"] is True and telemetry["recall_reason"]
    down = _json(upgraded, "lineage", f"dataset/{TELEMETRY}", "--down")
    assert down["nodes"]
    provenance = run_cli(["--db", upgraded, "lineage", f"{MODEL}@2", "--up", "--format",
                          "prov-json"])
    assert provenance.exit_code == 0 and "wasDerivedFrom" in provenance.stdout
    refused = [a for a in history["attempts"] if not a["passed"]]
    assert refused, "the demo's story has refusals"


PAGES = [
    "/",
    f"/models/{MODEL}",
    "/models/night-flow-leak",
    f"/models/{MODEL}/versions/1",
    f"/models/{MODEL}/versions/2",
    f"/models/{MODEL}/versions/3",
    f"/models/{MODEL}/versions/4",
    f"/models/{MODEL}/compare?a=1&b=2",
    f"/lineage?node=dataset/{TELEMETRY}",
    f"/lineage?node={MODEL}@2&direction=up",
    f"/datasets/{TELEMETRY}",
    "/datasets/brackwater-training-set?against=brackwater-evaluation-set",
]


@pytest.mark.parametrize("page", PAGES)
def test_every_page_renders_after_the_upgrade(upgraded, page):
    client = create_app(upgraded).test_client()
    response = client.get(page)
    assert response.status_code == 200, (page, response.data[:300])
