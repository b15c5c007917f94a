"""The ids of registry/node_ids.py are the forms the lineage command accepts and prints."""

from __future__ import annotations

from registry.node_ids import (
    contract_id,
    contract_version_id,
    dataset_id,
    evaluation_id,
    model_id,
    stage_id,
    version_id,
)
from registry.service.lineage import normalise_node


def test_each_id_has_the_documented_form():
    assert model_id("main-burst-risk") == "model/main-burst-risk"
    assert version_id("main-burst-risk", 3) == "model/main-burst-risk/version/3"
    assert stage_id("main-burst-risk", "live") == "model/main-burst-risk/stage/live"
    assert evaluation_id("main-burst-risk", 2, "eval-q3") == (
        "model/main-burst-risk/version/2/evaluation/eval-q3")
    assert dataset_id("asset-register") == "dataset/asset-register"
    assert contract_id("feed", "segment-features") == "feed/segment-features"
    assert contract_version_id("consumer", "work-order-planner", 1) == (
        "consumer/work-order-planner/version/1")


def test_lineage_reads_back_the_ids_it_is_given():
    for node in (version_id("main-burst-risk", 3), stage_id("main-burst-risk", "live"),
                 dataset_id("asset-register"), contract_id("feed", "segment-features")):
        assert normalise_node(node) == node
    assert normalise_node("main-burst-risk@3") == version_id("main-burst-risk", 3)
    assert normalise_node("main-burst-risk@v3") == version_id("main-burst-risk", 3)


def test_each_pattern_reads_back_the_parts_its_id_was_made_from():
    from registry.node_ids import (CONTRACT_ID, DATASET_ID, EVALUATION_ID, MODEL_ID, STAGE_ID,
                                   USER_ID, VERSION_ID, user_id)

    cases = [(MODEL_ID, model_id("m"), ("m",)),
             (VERSION_ID, version_id("m", 12), ("m", "12")),
             (EVALUATION_ID, evaluation_id("m", 2, "eval-q3"), ("m", "2", "eval-q3")),
             (STAGE_ID, stage_id("m", "live"), ("m", "live")),
             (DATASET_ID, dataset_id("d"), ("d",)),
             (CONTRACT_ID, contract_id("consumer", "c"), ("consumer", "c")),
             (USER_ID, user_id("ines.okafor"), ("ines.okafor",))]
    for pattern, node, parts in cases:
        found = pattern.match(node)
        assert found is not None and found.groups() == parts, node
    # Each id is read by its own pattern only.
    assert VERSION_ID.match(evaluation_id("m", 2, "d")) is None
    assert MODEL_ID.match(version_id("m", 2)) is None
