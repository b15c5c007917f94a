"""Lineage both ways and recall over HTTP."""

from __future__ import annotations

from registry.datasets import fingerprint_file
from registry.cli.demo import BRACKWATER

from tests.api.api_helpers import problem, set_up_model
from tests.catalogue.helpers import write_version_files

DATA = BRACKWATER / "datasets"


def _lined_up(api, tmp_path):
    set_up_model(api, tmp_path)
    telemetry = fingerprint_file(str(DATA / "brackwater-telemetry-extract.avro"),
                                 schema_json=None).to_dict()
    training = fingerprint_file(str(DATA / "brackwater-training-set.parquet"),
                                schema_json=None).to_dict()
    assert api.post("/datasets", {"name": "telemetry", "fingerprint": telemetry},
                    role="publisher").status_code == 201
    assert api.post("/datasets", {"name": "training", "role": "training",
                                  "fingerprint": training, "derived_from": ["telemetry"]},
                    role="publisher").status_code == 201
    document, manifest = write_version_files(tmp_path / "v1",
                                             manifest_extra='trained_on = ["training"]\n')
    from tests.api.api_helpers import upload_parts

    assert api.post("/models/m/versions", role="publisher", data=upload_parts(document, manifest),
                    content_type="multipart/form-data").status_code == 201


def test_lineage_walks_up_from_a_version_and_down_from_a_dataset(api, tmp_path):
    _lined_up(api, tmp_path)
    up = api.get("/lineage?node=m@1&direction=up")
    assert up.status_code == 200, up.data
    assert {n["id"] for n in up.json["nodes"]} >= {"dataset/training", "dataset/telemetry"}
    down = api.get("/lineage?node=dataset/telemetry&direction=down&depth=5")
    assert "model/m/version/1" in {n["id"] for n in down.json["nodes"]}
    prov = api.get("/lineage?node=m@1&direction=up&format=prov-json")
    assert prov.status_code == 200 and "entity" in prov.json


def test_a_recall_flags_everything_downstream(api, tmp_path):
    _lined_up(api, tmp_path)
    recalled = api.post("/datasets/telemetry/recall", {"reason": "sensor calibration fault"},
                        role="approver")
    assert recalled.status_code == 200, recalled.data
    assert recalled.json["downstream_datasets"] == ["training"]
    assert [v["version"] for v in recalled.json["downstream_versions"]] == [1]
    down = api.get("/lineage?node=dataset/telemetry&direction=down").json
    assert all(n["flagged"] for n in down["nodes"] if n["kind"] != "stage")
    again = api.post("/datasets/telemetry/recall", {"reason": "again"}, role="approver")
    assert again.status_code == 400 and "already recalled" in problem(again)["detail"]


def test_bad_lineage_queries_are_400_problems(api, tmp_path):
    _lined_up(api, tmp_path)
    for query in ("node=m@1", "node=m@1&direction=sideways", "direction=up",
                  "node=m@1&direction=up&depth=-1", "node=m@1&direction=up&depth=99999999",
                  "node=m@1&direction=up&format=xml", "node=m@1&direction=up&colour=red",
                  "node=..%2F..%2Fetc&direction=up", "node=%3Cscript%3E&direction=up"):
        response = api.get(f"/lineage?{query}")
        assert 400 <= response.status_code < 500, (query, response.data)
        problem(response)
    assert problem(api.get("/lineage?node=dataset/nothing&direction=up"))["status"] == 404
