"""Lineage walks both ways, the lineage command, PROV-JSON, and recall with its audit event."""

from __future__ import annotations

import json

import click
import networkx
import pytest
from click.testing import CliRunner
from prov.model import ProvDocument

from registry.cli import LockkeeperGroup
from registry.cli.context import CommandContext
from registry.cli.lineage_commands import recall_command
from registry.errors import NotFound, UserError
from registry.service.lineage import lineage_of, normalise_node
from registry.service.recall import recall_dataset, recalled_upstream
from registry.store import tables as t
from registry.store.unit_of_work import UnitOfWork
from tests.lineage.scenario import INES, build_brackwater

TELEMETRY = "dataset/brackwater-telemetry-extract"
V = "model/main-burst-risk/version/{}".format


@pytest.fixture
def brackwater(catalogue):
    build_brackwater(catalogue)
    return catalogue


def _ids(graph, kind=None):
    return {n.id for n in graph.nodes if kind is None or n.kind == kind}


def test_downstream_of_telemetry_reaches_derived_sets_every_version_and_stages(shared):
    graph = lineage_of(shared, TELEMETRY, "down")
    assert _ids(graph, "dataset") == {TELEMETRY, "dataset/brackwater-training-set",
                                      "dataset/brackwater-evaluation-set"}
    assert _ids(graph, "version") == {V(n) for n in (1, 2, 3, 4)}
    assert "model/main-burst-risk/stage/live" in _ids(graph, "stage")
    assert not any(n.model == "night-flow-leak" for n in graph.nodes)


def test_upstream_of_a_version_follows_parent_versions_and_derived_from(shared):
    graph = lineage_of(shared, "main-burst-risk@3", "up")
    assert _ids(graph) == {V(3), V(2), V(1), TELEMETRY, "dataset/brackwater-asset-register",
                           "dataset/brackwater-training-set", "dataset/brackwater-evaluation-set"}
    relations = {(e.source, e.relation, e.target) for e in graph.edges}
    assert (V(3), "parent-version", V(2)) in relations
    assert ("dataset/brackwater-training-set", "derived-from", TELEMETRY) in relations
    assert (V(3), "trained-on", "dataset/brackwater-training-set") in relations


def test_depth_limits_the_walk_and_reports_the_shortest_distance(shared):
    graph = lineage_of(shared, TELEMETRY, "down", depth=1)
    assert _ids(graph) == {TELEMETRY, "dataset/brackwater-training-set",
                           "dataset/brackwater-evaluation-set"}
    assert graph.node(TELEMETRY).depth == 0
    deeper = lineage_of(shared, TELEMETRY, "down", depth=2)
    assert deeper.node(V(2)).depth == 2


def test_walks_agree_with_networkx_on_the_same_edges(shared):
    # Reference: networkx.descendants / ancestors over the edges the graph reports.
    full = lineage_of(shared, TELEMETRY, "down")
    reference = networkx.DiGraph((e.target, e.source) for e in full.edges)
    assert _ids(full) - {TELEMETRY} == networkx.descendants(reference, TELEMETRY)
    live_up = lineage_of(shared, "model/main-burst-risk/stage/live", "up")
    reference = networkx.DiGraph((e.target, e.source) for e in live_up.edges)
    assert _ids(live_up) - {live_up.root} == networkx.ancestors(reference, live_up.root)


def test_stage_nodes_say_whether_someone_holds_them_now(shared):
    graph = lineage_of(shared, "model/main-burst-risk/stage/live", "up", depth=1)
    assert _ids(graph, "version") == {V(1), V(2)}
    relations = {(e.target, e.relation) for e in graph.edges if e.source == graph.root}
    assert relations == {(V(1), "held-by"), (V(2), "was-held-by")}
    assert graph.node(graph.root).current


@pytest.mark.parametrize("text, expected", [
    ("brackwater-telemetry-extract", TELEMETRY),
    ("main-burst-risk@2", V(2)),
    ("model/main-burst-risk/version/02", V(2)),
    ("model/main-burst-risk/stage/live", "model/main-burst-risk/stage/live"),
])
def test_node_spellings_normalise_to_one_id(text, expected):
    assert normalise_node(text) == expected


@pytest.mark.parametrize("bad", ["", "Dataset/X", "model/m", "a/b/c", "m@x", "<script>"])
def test_malformed_node_is_a_user_error(bad):
    with pytest.raises(UserError):
        normalise_node(bad)


@pytest.mark.parametrize("node", ["dataset/nope", "nope@1", "main-burst-risk@99",
                                  "model/main-burst-risk/stage/nowhere"])
def test_unknown_node_is_not_found(shared, node):
    with pytest.raises(NotFound):
        lineage_of(shared, node, "down")


def test_lineage_command_json_and_text(shared_cli):
    document = shared_cli.json("lineage", "brackwater-telemetry-extract", "--down")
    assert document["root"] == TELEMETRY and document["direction"] == "down"
    assert {"id", "kind", "label", "recalled", "flagged"} <= set(document["nodes"][0])
    assert {"source", "target", "relation"} == set(document["edges"][0])
    text = shared_cli("lineage", "main-burst-risk@2", "--up", "--depth", "1")
    assert text.exit_code == 0 and "derived-from" not in text.stdout
    assert "dataset/brackwater-training-set" in text.stdout


def test_prov_json_reads_back_with_the_prov_library(shared_cli):
    result = shared_cli("lineage", "model/main-burst-risk/stage/live", "--up", "--format", "prov-json")
    assert result.exit_code == 0, result.output
    # Reference: the `prov` library's PROV-JSON deserializer (W3C PROV-JSON submission).
    document = ProvDocument.deserialize(content=result.stdout, format="json")
    records = {type(r).__name__ for r in document.get_records()}
    assert {"ProvEntity", "ProvActivity", "ProvAgent", "ProvUsage", "ProvGeneration",
            "ProvDerivation", "ProvAttribution"} <= records
    entities = {str(r.identifier) for r in document.get_records() if r.is_element()
                and type(r).__name__ == "ProvEntity"}
    assert f"lk:{V(2)}" in entities and f"lk:{TELEMETRY}" in entities
    agents = {str(r.identifier) for r in document.get_records()
              if type(r).__name__ == "ProvAgent"}
    assert "lk:user/ines.okafor" in agents and "lk:user/tomas.lindqvist" in agents


@pytest.mark.parametrize("arguments", [
    ["lineage", "brackwater-telemetry-extract"],  # no direction
    ["lineage", "dataset/nope", "--down"],
    ["lineage", "bad node!", "--down"],
    ["lineage", "brackwater-telemetry-extract", "--down", "--depth", "-1"],
    ["lineage", "brackwater-telemetry-extract", "--down", "--format", "dot"],
    ["lineage", "brackwater-telemetry-extract", "--down", "--json", "--format", "prov-json"],
])
def test_bad_lineage_input_is_one_line_and_exit_2(shared_cli, arguments):
    result = shared_cli(*arguments)
    assert result.exit_code == 2, result.output
    assert "Traceback" not in result.output


def _recall_shell(url: str):
    @click.group(cls=LockkeeperGroup)
    @click.pass_context
    def shell(ctx):
        ctx.obj = CommandContext(db_url=url, acting_user="ines.okafor")
        ctx.call_on_close(ctx.obj.close)

    shell.add_command(recall_command)
    return shell


def test_recall_flags_downstream_and_names_the_versions_in_a_stage(brackwater, catalogue_url):
    result = CliRunner().invoke(_recall_shell(catalogue_url),
                                ["recall", "brackwater-telemetry-extract", "--reason",
                                 "sensor calibration fault in March", "--json"])
    assert result.exit_code == 0, result.output
    outcome = json.loads(result.stdout)
    assert outcome["downstream_datasets"] == ["brackwater-evaluation-set",
                                              "brackwater-training-set"]
    assert [(v["model"], v["version"]) for v in outcome["downstream_versions"]] == [
        ("main-burst-risk", n) for n in (1, 2, 3, 4)]
    # Only stages something is served from need acting on: not candidate, not retired.
    assert {(s["version"], s["stage"]) for s in outcome["holding_stages"]} == {(1, "live")}
    graph = lineage_of(brackwater, "main-burst-risk@2", "up")
    assert graph.node(TELEMETRY).recalled and graph.node(V(2)).flagged
    assert not graph.node("dataset/brackwater-asset-register").flagged
    with UnitOfWork(brackwater, write=False) as uow:
        event = uow.session.query(t.AuditEvent).order_by(t.AuditEvent.sequence.desc()).first()
        assert (event.action, event.subject) == ("dataset.recall", TELEMETRY)
        row = uow.session.query(t.Dataset).filter_by(name="brackwater-telemetry-extract").one()
        assert row.recalled_by == "ines.okafor" and row.recall_reason.startswith("sensor")


def test_recalled_upstream_gives_the_chain_for_the_gate(brackwater):
    with UnitOfWork(brackwater, write=False) as uow:
        version = uow.session.query(t.Version).filter_by(number=3).join(t.Model).filter(
            t.Model.name == "main-burst-risk").one()
        assert recalled_upstream(uow, version) == []
        version_key = version.id
    recall_dataset(brackwater, "brackwater-telemetry-extract", "calibration fault", INES)
    with UnitOfWork(brackwater, write=False) as uow:
        version = uow.session.get(t.Version, version_key)
        sources = recalled_upstream(uow, version)
    assert [s.dataset for s in sources] == ["brackwater-telemetry-extract"]
    chain = sources[0].chain
    assert chain[0] == TELEMETRY and chain[-1] == V(3)
    assert chain[1] in ("dataset/brackwater-training-set", "dataset/brackwater-evaluation-set")


@pytest.mark.parametrize("name, reason, message", [
    ("brackwater-telemetry-extract", "   ", "reason"),
    ("no-such-dataset", "bad", "unknown dataset"),
])
def test_bad_recall_is_refused_and_changes_nothing(shared, shared_url, name, reason, message):
    result = CliRunner().invoke(_recall_shell(shared_url), ["recall", name, "--reason", reason])
    assert result.exit_code == 2 and message in result.stderr
    assert not lineage_of(shared, TELEMETRY, "down").node(TELEMETRY).recalled


def test_a_dataset_cannot_be_recalled_twice(brackwater):
    recall_dataset(brackwater, "brackwater-telemetry-extract", "calibration fault", INES)
    with pytest.raises(UserError, match="already recalled"):
        recall_dataset(brackwater, "brackwater-telemetry-extract", "again", INES)


def test_recall_needs_a_publisher_or_approver(shared):
    from registry.errors import Forbidden
    from registry.service.actors import Actor

    with pytest.raises(Forbidden):
        recall_dataset(shared, "brackwater-telemetry-extract", "fault", Actor("visitor"))


def test_recall_in_text_names_what_to_act_on(brackwater, catalogue_url):
    result = CliRunner().invoke(_recall_shell(catalogue_url),
                                ["recall", "brackwater-telemetry-extract", "--reason", "fault"])
    assert result.exit_code == 0, result.output
    assert "recalled brackwater-telemetry-extract: fault" in result.stdout
    assert "act on these now" in result.stdout and "main-burst-risk v1 in live" in result.stdout


def test_a_model_name_alone_is_not_found_with_a_hint(shared):
    with pytest.raises(NotFound, match="is a model"):
        lineage_of(shared, "main-burst-risk", "up")
