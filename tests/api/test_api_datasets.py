"""Datasets and evaluations over HTTP: uploaded files, producer-side fingerprints, metrics."""

from __future__ import annotations

import io
import json

import pytest

from registry.cli.remote import ApiClient
from registry.datasets import fingerprint_file
from registry.cli.demo import BRACKWATER

from tests.api.api_helpers import problem
from tests.api.test_api_client import live  # noqa: F401 - the live server fixture

DATA, SCHEMAS = BRACKWATER / "datasets", BRACKWATER / "schemas"
PREDICTIONS, MANIFESTS = BRACKWATER / "predictions", BRACKWATER / "manifests"


def _upload(name: str, file: str, **fields) -> dict:
    parts = {"name": name, "file": (io.BytesIO((DATA / file).read_bytes()), file)}
    for key, value in fields.items():
        parts[key] = value
    return parts


def _add_brackwater_datasets(api) -> dict:
    added = {}
    schema = (SCHEMAS / "brackwater-asset-register.avsc").read_bytes()
    added["assets"] = api.post("/datasets", role="publisher", content_type="multipart/form-data",
                               data=_upload("brackwater-asset-register",
                                            "brackwater-asset-register.csv",
                                            schema=(io.BytesIO(schema), "assets.avsc")))
    added["telemetry"] = api.post("/datasets", role="publisher",
                                  content_type="multipart/form-data",
                                  data=_upload("brackwater-telemetry-extract",
                                               "brackwater-telemetry-extract.avro"))
    for name, file, role in (("brackwater-training-set", "brackwater-training-set.parquet",
                              "training"),
                             ("brackwater-evaluation-set", "brackwater-evaluation-set.parquet",
                              "evaluation")):
        added[role] = api.post("/datasets", role="publisher", content_type="multipart/form-data",
                               data=_upload(name, file, role=role, key="segment_id",
                                            exclude="burst_within_90d",
                                            derived_from=["brackwater-asset-register",
                                                          "brackwater-telemetry-extract"]))
    for response in added.values():
        assert response.status_code == 201, response.data
    return added


def test_an_uploaded_dataset_gets_the_fingerprint_the_cli_computes(api, cli):
    added = _add_brackwater_datasets(api)
    local = cli.json("dataset", "fingerprint", str(DATA / "brackwater-evaluation-set.parquet"),
                     "--key", "segment_id")
    assert added["evaluation"].json["content_digest"] == local["content_digest"]
    assert added["evaluation"].json["derived_from"] == ["brackwater-asset-register",
                                                         "brackwater-telemetry-extract"]
    shown = api.get("/datasets/brackwater-evaluation-set")
    assert shown.status_code == 200 and shown.json["rows"] == 950
    assert len(api.get("/datasets").json["datasets"]) == 4


def test_a_fingerprint_computed_by_the_producer_registers_the_same_dataset(api):
    fingerprint = fingerprint_file(str(DATA / "brackwater-live-sample.avro"), schema_json=None)
    response = api.post("/datasets", {"name": "live-sample", "role": "source",
                                      "fingerprint": fingerprint.to_dict()}, role="publisher")
    assert response.status_code == 201, response.data
    assert response.json["content_digest"] == fingerprint.content_digest
    again = api.post("/datasets", {"name": "live-sample", "role": "source",
                                   "fingerprint": fingerprint.to_dict()}, role="publisher")
    assert again.status_code == 200 and again.json["created"] is False


@pytest.mark.parametrize("fingerprint, field", [
    ({}, "rows"), ({"rows": "many"}, "rows"), ({"rows": 1, "content_digest": "x"},
                                               "content_digest")])
def test_a_broken_fingerprint_is_a_422_problem_naming_the_field(api, fingerprint, field):
    response = api.post("/datasets", {"name": "broken", "fingerprint": fingerprint},
                        role="publisher")
    assert response.status_code == 422, response.data
    assert problem(response)["place"] == f"body/fingerprint/{field}"
    assert api.get("/datasets").json["datasets"] == []


def _live_sample_with(**changes) -> dict:
    document = fingerprint_file(str(DATA / "brackwater-live-sample.avro"),
                                schema_json=None).to_dict()
    for path, value in changes.items():
        *parents, last = path.split("__")
        target = document
        for step in parents:
            target = target[step]
        target[last] = value
    return document


@pytest.mark.parametrize("changes, field", [
    ({"rows": 10**30}, "rows"),
    ({"rows": -5}, "rows"),
    ({"rows": True}, "rows"),
    ({"content_digest": "B91B3EC4E6E5AFE94108603B6B47A2AC"}, "content_digest"),
    ({"key_digest": "12345"}, "key_digest"),
    ({"schema_fingerprint": "0" * 64}, "schema_fingerprint"),
    ({"schema__name": "renamed_without_a_new_fingerprint"}, "schema_fingerprint"),
    ({"keys": ["x" * 300]}, "keys"),
    ({"profile__segment_id__nulls": 401}, "profile/segment_id/nulls"),
    ({"sketch__k": 0}, "sketch/k"),
])
def test_a_producer_fingerprint_is_checked_where_it_can_be(api, changes, field):
    # The schema fingerprint is recomputed from the schema the fingerprint carries (SHA-256 of
    # the Parsing Canonical Form, Avro specification, Schema Fingerprints); the rest is bounded.
    response = api.post("/datasets", {"name": "live-sample",
                                      "fingerprint": _live_sample_with(**changes)},
                        role="publisher")
    assert response.status_code == 422, response.data
    assert problem(response)["place"] == f"body/fingerprint/{field}"
    assert api.get("/datasets").json["datasets"] == []


def test_a_source_uri_is_bounded(api):
    response = api.post("/datasets", {"name": "live-sample", "fingerprint": _live_sample_with(),
                                      "source_uri": "s3://" + "x" * 5000}, role="publisher")
    assert response.status_code == 400 and problem(response)["place"] == "body/source_uri"


def test_dataset_uploads_refuse_bad_parts_and_wrong_roles(api):
    refused = api.post("/datasets", role="publisher", content_type="multipart/form-data",
                       data=_upload("x", "brackwater-live-sample.avro", colour="red"))
    assert refused.status_code == 400 and problem(refused)["type"].endswith("/unknown-fields")
    traversal = api.post("/datasets", role="publisher", content_type="multipart/form-data",
                         data=_upload("../etc", "brackwater-live-sample.avro"))
    assert traversal.status_code == 400
    not_csv = api.post("/datasets", role="publisher", content_type="multipart/form-data",
                       data={"name": "x", "file": (io.BytesIO(b"\x00\x01garbage"),
                                                   "../../x.csv")})
    assert 400 <= not_csv.status_code < 500 and "/tmp" not in not_csv.get_data(as_text=True)
    assert api.post("/datasets", role="reader", content_type="multipart/form-data",
                    data=_upload("x", "brackwater-live-sample.avro")).status_code == 403
    assert api.get("/datasets").json["datasets"] == []


def test_the_brackwater_v1_story_over_http(live):  # noqa: F811 - the fixture
    api, url = live
    _add_brackwater_datasets(api)
    admin = ApiClient(url, api.secrets["admin"])
    publisher = ApiClient(url, api.secrets["publisher"])
    admin.create_model("main-burst-risk")
    registered = publisher.register(
        "main-burst-risk", BRACKWATER / "documents" / "main-burst-risk-v1.pfa.json",
        MANIFESTS / "main-burst-risk-v1.toml")
    assert registered["version"] == 1 and registered["created"]
    shown = api.get("/models/main-burst-risk").json
    assert shown["versions"][0]["document_kind"] == "pfa"

    parts = {"predictions": (io.BytesIO((PREDICTIONS / "main-burst-risk-v1.csv").read_bytes()),
                             "main-burst-risk-v1.csv"),
             "dataset": "brackwater-evaluation-set", "slice": "district"}
    evaluated = api.post("/models/main-burst-risk/versions/1/evaluations", role="publisher",
                         data=parts, content_type="multipart/form-data")
    assert evaluated.status_code == 201, evaluated.data
    # The seed generator's own figure, checked there against scikit-learn's roc_auc_score.
    assert evaluated.json["metrics"]["roc_auc"] == pytest.approx(0.7677, abs=1e-4)
    listed = api.get("/models/main-burst-risk/versions/1/evaluations").json["evaluations"]
    assert [e["dataset"] for e in listed] == ["brackwater-evaluation-set"]
    bad = api.post("/models/main-burst-risk/versions/1/evaluations", role="publisher",
                   data={"predictions": (io.BytesIO(b"row_id,label,score\nx,1,0.5\ny,0,0.2\n"),
                                         "p.csv"),
                         "dataset": "brackwater-evaluation-set"},
                   content_type="multipart/form-data")
    assert bad.status_code == 400 and "row ids" in problem(bad)["detail"]
    assert json.loads(api.get("/audit/verify", role="admin").data)["ok"] is True


def test_the_client_registers_datasets_and_evaluations(live, tmp_path):  # noqa: F811
    api, url = live
    publisher = ApiClient(url, api.secrets["publisher"])
    uploaded = publisher.add_dataset_file(
        "evaluation", DATA / "brackwater-evaluation-set.parquet", role="evaluation",
        keys=["segment_id"], exclude=["burst_within_90d"])
    assert uploaded["rows"] == 950 and uploaded["role"] == "evaluation"
    csv_upload = publisher.add_dataset_file(
        "assets", DATA / "brackwater-asset-register.csv",
        schema=SCHEMAS / "brackwater-asset-register.avsc")
    assert csv_upload["created"] is True
    fingerprint = fingerprint_file(str(DATA / "brackwater-live-sample.avro"), schema_json=None)
    made = publisher.add_dataset_fingerprint("live", fingerprint.to_dict(),
                                             derived_from=["assets"])
    assert made["derived_from"] == ["assets"]
    assert publisher.show_dataset("live")["content_digest"] == fingerprint.content_digest
    assert len(publisher.list_datasets()["datasets"]) == 3

    ApiClient(url, api.secrets["admin"]).create_model("m")
    from tests.catalogue.helpers import write_version_files

    publisher.register("m", *write_version_files(tmp_path / "v1"))
    evaluated = publisher.evaluate("m", 1, "evaluation", PREDICTIONS / "main-burst-risk-v1.csv",
                                   slices=["district"], threshold=0.5)
    assert evaluated["n"] == 950 and "district" in evaluated["slices"]
    assert publisher.list_evaluations("m", 1)["evaluations"][0]["dataset"] == "evaluation"
    assert "dataset/live" in {n["id"] for n in publisher.lineage("assets", "down")["nodes"]}
    assert "entity" in publisher.lineage("dataset/assets", "down", depth=1,
                                         output_format="prov-json")
    assert publisher.recall("assets", "wrong schema")["downstream_datasets"] == ["live"]
