"""Feeds, consumers and impact over HTTP: the routes are in the OpenAPI document, writes need a
publisher (a waiver an approver), and bad input is a 4xx problem document that changes nothing."""

from __future__ import annotations

import pytest

from registry.api import routes  # noqa: F401 - registers every route
from registry.api.openapi import document
from tests.api.api_helpers import problem, set_up_model
from tests.catalogue.helpers import INPUT_SCHEMA, OUTPUT_SCHEMA

DROPPED = {**INPUT_SCHEMA, "fields": [INPUT_SCHEMA["fields"][0]]}


def _events(api) -> int:
    return api.get("/audit/verify", role="admin").json["events"]


@pytest.fixture
def ready(api, tmp_path):
    set_up_model(api, tmp_path, gates_by_stage={"live": ["reads-live-feed"]})
    created = api.post("/feeds", {"name": "segment-features", "retain_days": 14},
                       role="publisher")
    assert created.status_code == 201, created.data
    published = api.post("/feeds/segment-features/schemas", {"schema": INPUT_SCHEMA},
                         role="publisher")
    assert published.status_code == 200 and published.json["feed_version"] == 1
    assert api.put("/models/m/feed", {"feed": "segment-features"},
                   role="publisher").status_code == 200
    assert api.register("m", tmp_path).status_code == 201
    moved = api.post("/models/m/versions/1/promote", {"stage": "live"}, role="approver")
    assert moved.json["moved"] is True, moved.json
    return api


def test_every_contract_route_is_in_the_openapi_document():
    paths = document()["paths"]
    for path, method in (("/api/v1/feeds", "post"), ("/api/v1/feeds", "get"),
                         ("/api/v1/feeds/{feed}", "get"),
                         ("/api/v1/feeds/{feed}/schemas", "post"),
                         ("/api/v1/feeds/{feed}/check", "post"),
                         ("/api/v1/models/{model}/feed", "put"),
                         ("/api/v1/consumers", "post"), ("/api/v1/consumers", "get"),
                         ("/api/v1/consumers/{consumer}", "get"),
                         ("/api/v1/consumers/{consumer}", "delete"),
                         ("/api/v1/consumers/{consumer}/schemas", "post"),
                         ("/api/v1/consumers/{consumer}/check", "post"),
                         ("/api/v1/models/{model}/versions/{version}/impact", "get")):
        assert method in paths[path], (path, method)


def test_publishing_the_current_schema_again_is_idempotent_and_says_so(ready):
    api = ready
    before = _events(api)
    again = api.post("/feeds/segment-features/schemas", {"schema": INPUT_SCHEMA},
                     role="publisher")
    assert again.status_code == 200 and again.json["published"] is False
    assert "identical" in again.json["summary"] and _events(api) == before


def test_a_refused_schema_is_published_only_with_an_approvers_waiver(ready):
    api = ready
    check = api.post("/feeds/segment-features/check", {"schema": DROPPED}, role="reader")
    assert check.status_code == 200 and check.json["passed"] is False
    refused = api.post("/feeds/segment-features/schemas", {"schema": DROPPED}, role="publisher")
    assert refused.json["refused"] is True
    by_publisher = api.post("/feeds/segment-features/schemas",
                            {"schema": DROPPED, "waiver_reason": "moving it"}, role="publisher")
    assert by_publisher.status_code == 403, by_publisher.data
    waived = api.post("/feeds/segment-features/schemas",
                      {"schema": DROPPED, "waiver_reason": "diameter moves to the asset feed"},
                      role="approver")
    assert waived.json["published"] is True and waived.json["waiver"]["used"] is True
    assert api.get("/feeds/segment-features").json["current_version"] == 2


def test_consumers_and_impact(ready):
    api = ready
    added = api.post("/consumers", {"name": "work-order-planner", "model": "m",
                                    "schema": OUTPUT_SCHEMA, "owner": "asset planning"},
                     role="publisher")
    assert added.status_code == 201, added.data
    assert [c["consumer"] for c in api.get("/consumers").json["consumers"]] == [
        "work-order-planner"]
    wanting = {**OUTPUT_SCHEMA, "fields": [*OUTPUT_SCHEMA["fields"],
                                           {"name": "cost", "type": "double"}]}
    check = api.post("/consumers/work-order-planner/check", {"schema": wanting})
    assert check.json["blocking"] == ["m@1:live"]
    impact = api.get("/models/m/versions/1/impact?stage=live")
    assert list(impact.json) == ["model", "version", "stage", "incumbent", "feeds",
                                 "consumers", "features", "metrics", "slices", "datasets"]
    assert api.delete("/consumers/work-order-planner", role="publisher").status_code == 200


@pytest.mark.parametrize("method, path, body, role, status, kind", [
    ("get", "/feeds/no-such-feed", None, "reader", 404, "not-found"),
    ("post", "/feeds/no-such-feed/schemas", {"schema": INPUT_SCHEMA}, "publisher", 404,
     "not-found"),
    ("post", "/consumers/nobody/schemas", {"schema": OUTPUT_SCHEMA}, "publisher", 404,
     "not-found"),
    ("delete", "/consumers/nobody", None, "publisher", 404, "not-found"),
    ("post", "/consumers", {"name": "x", "model": "no-such-model", "schema": OUTPUT_SCHEMA},
     "publisher", 404, "not-found"),
    ("post", "/feeds/segment-features/schemas", {"schema": {"type": "record"}}, "publisher",
     422, "invalid-schema"),
    ("put", "/models/m/feed", {"feed": "no-such-feed"}, "publisher", 404, "not-found"),
    ("post", "/feeds", {"name": "f2", "retain_days": 0}, "publisher", 400, "bad-input"),
    ("post", "/feeds", {"name": "f2", "retain_days": "7"}, "publisher", 400, "bad-input"),
    ("post", "/feeds", {"name": "f2"}, "reader", 403, "forbidden"),
    ("get", "/models/m/versions/1/impact?stage=nowhere", None, "reader", 404, "not-found"),
    ("get", "/models/m/versions/1/impact?stage=live&x=1", None, "reader", 400,
     "unknown-fields"),
])
def test_bad_input_is_a_problem_document_and_changes_nothing(ready, method, path, body, role,
                                                            status, kind):
    api = ready
    before = _events(api)
    call = getattr(api, method)
    response = call(path, body, role=role) if body is not None else call(path, role=role)
    assert response.status_code == status, response.data
    assert problem(response)["type"].endswith("/" + kind)
    assert _events(api) == before
