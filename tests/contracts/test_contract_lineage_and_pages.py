"""Feeds and consumers in lineage (text, JSON, PROV-JSON, the web picture), the recall of a
dataset a feed is built from, and the version page's view of what changes, on the demo story."""

from __future__ import annotations

import json

import pytest
from click.testing import CliRunner

from registry.cli import demo
from registry.cli import main


def _play(url: str) -> list[str]:
    outputs: list[str] = []

    def run(arguments: list[str], user: str) -> int:
        result = CliRunner().invoke(main, arguments, catch_exceptions=False)
        outputs.append(result.output)
        return result.exit_code

    demo.play(url, run, lambda line: None)
    return outputs


def _ids(graph: dict) -> dict[str, dict]:
    return {node["id"]: node for node in graph["nodes"]}


def test_feeds_and_consumers_are_lineage_nodes_both_ways(catalogue_url, cli):
    outputs = _play(catalogue_url)
    recall = next(text for text in outputs if text.startswith("recalled brackwater-telemetry"))
    assert "feeds built from it, flagged: segment-features" in recall
    assert "consumers downstream, flagged: work-order-planner" in recall

    down = cli.json("lineage", "feed/segment-features", "--down")
    nodes = _ids(down)
    assert {"model/main-burst-risk/version/1", "consumer/work-order-planner"} <= set(nodes)
    assert nodes["consumer/work-order-planner"]["kind"] == "consumer"
    assert nodes["consumer/work-order-planner"]["flagged"] is True  # the feed's source recalled
    edges = {(e["source"], e["relation"], e["target"]) for e in down["edges"]}
    assert ("model/main-burst-risk/version/1", "reads-feed", "feed/segment-features") in edges
    # Only the version serving the model (holding an exclusive stage) is read by the consumer.
    assert ("consumer/work-order-planner", "reads-output-of",
            "model/main-burst-risk/version/1") in edges
    assert not any(e[0] == "consumer/work-order-planner" and e[2].endswith("/version/2")
                   for e in edges)

    up = _ids(cli.json("lineage", "consumer/work-order-planner", "--up"))
    assert {"feed/segment-features", "dataset/brackwater-telemetry-extract",
            "dataset/brackwater-training-set"} <= set(up)

    written = cli("lineage", "feed/segment-features", "--up", "--format", "prov-json")
    assert written.exit_code == 0, written.output
    prov = json.loads(written.stdout)
    assert "lk:feed/segment-features" in prov["entity"]
    derived = [r for r in prov["wasDerivedFrom"].values()
               if r["prov:type"]["$"] == "lk:built-from"]
    assert derived[0]["prov:usedEntity"] == "lk:dataset/brackwater-telemetry-extract"

    missing = cli("lineage", "feed/no-such-feed", "--down")
    assert missing.exit_code == 2 and "unknown feed" in missing.stderr


@pytest.fixture(scope="module")
def demo_client(tmp_path_factory):
    from registry.app import create_app
    from tests.conftest import run_cli

    url = f"sqlite:///{tmp_path_factory.mktemp('contracts-web') / 'catalogue.db'}"
    assert run_cli(["--db", url, "init"]).exit_code == 0
    _play(url)
    app = create_app(url, config={"TESTING": False})
    yield app.test_client()
    app.extensions["lockkeeper"].close()


def test_the_version_page_shows_what_changes_if_it_goes_live(demo_client):
    version = demo_client.get("/models/main-burst-risk/versions/2").get_data(as_text=True)
    assert "/models/main-burst-risk/versions/2/impact" in version
    assert "what changes if v2 goes live" in version
    response = demo_client.get("/models/main-burst-risk/versions/2/impact")
    assert response.status_code == 200
    html = response.get_data(as_text=True)
    assert "What changes if v2 goes live" in html
    for text in ("segment-features v2", "segment-features v1", "work-order-planner",
                 "repairs_5y", "SALTMARSH", 'class="intervals" role="img"'):
        assert text in html, text
    assert "gates support but do not replace review" in " ".join(html.split())
    assert demo_client.get("/models/main-burst-risk/versions/2/impact?stage=canary"
                           ).status_code == 200


@pytest.mark.parametrize("path, status", [
    ("/models/main-burst-risk/versions/2/impact?stage=nowhere", 404),
    ("/models/main-burst-risk/versions/2/impact?stage=..%2F", 400),
    ("/models/main-burst-risk/versions/99/impact", 404),
    ("/models/no-such-model/versions/1/impact", 404),
])
def test_bad_impact_pages_are_4xx(demo_client, path, status):
    assert demo_client.get(path).status_code == status


def test_the_lineage_picture_draws_feeds_and_consumers(demo_client):
    html = demo_client.get("/lineage?node=feed/segment-features").get_data(as_text=True)
    assert 'class="node feed' in html and 'class="node consumer' in html
    assert ">feeds<" in html and ">consumers<" in html
