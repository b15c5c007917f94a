"""The OpenAPI document matches the routes, and generated requests never get a 5xx."""

from __future__ import annotations

import re

import pytest

from registry.app import create_app

pytestmark = pytest.mark.filterwarnings("ignore::DeprecationWarning")


def _flask_operations(app) -> set[tuple[str, str]]:
    found = set()
    for rule in app.url_map.iter_rules():
        if not rule.rule.startswith("/api/v1/"):
            continue
        path = re.sub(r"<(?:\w+:)?(\w+)>", r"{\1}", rule.rule)
        for method in rule.methods - {"HEAD", "OPTIONS"}:
            found.add((path, method.lower()))
    return found


def test_every_route_is_in_the_openapi_document_and_nothing_else(tmp_path):
    app = create_app(f"sqlite:///{tmp_path / 'unused.db'}", pages=False)
    document = app.test_client().get("/api/v1/openapi.json").json
    assert document["openapi"] == "3.1.0"
    documented = {(path, method) for path, item in document["paths"].items()
                  for method in item}
    assert documented == _flask_operations(app)


def test_the_openapi_document_is_valid_openapi_3_1(tmp_path):
    from schemathesis.openapi import from_dict

    app = create_app(f"sqlite:///{tmp_path / 'unused.db'}", pages=False)
    loaded = from_dict(app.test_client().get("/api/v1/openapi.json").json)
    operations = [result.ok() for result in loaded.get_all_operations()]
    assert len(operations) == len(_flask_operations(app))


def test_every_write_declares_a_role_and_problem_responses(tmp_path):
    app = create_app(f"sqlite:///{tmp_path / 'unused.db'}", pages=False)
    document = app.test_client().get("/api/v1/openapi.json").json
    for path, item in document["paths"].items():
        for method, operation in item.items():
            if path.endswith(("/ping", "/openapi.json")):
                assert "security" not in operation
                continue
            assert operation["security"] == [{"bearer": []}], (path, method)
            assert "401" in operation["responses"] and "403" in operation["responses"]


def test_generated_requests_to_reads_and_the_schema_check_never_get_a_5xx(cli, tmp_path):
    """schemathesis (OpenAPI-driven fuzzing): 20 examples per operation, a fixed seed."""
    import schemathesis
    from hypothesis import HealthCheck, given, settings

    from tests.api.api_helpers import make_api, set_up_model

    api = make_api(cli)
    set_up_model(api, tmp_path)
    api.register("m", tmp_path)
    api.post("/models/m/versions/1/promote", {"stage": "live"}, role="approver")
    app = api.client.application
    loaded = schemathesis.openapi.from_wsgi("/api/v1/openapi.json", app)
    headers = api.headers("reader")
    chosen = [result.ok() for result in loaded.get_all_operations()
              if result.ok().method.upper() == "GET" or result.ok().path == "/api/v1/schemas/check"]
    assert len(chosen) >= 12
    failures = []
    # Valid requests for every chosen operation, and invalid bodies for the schema check.
    runs = [(operation, schemathesis.GenerationMode.POSITIVE) for operation in chosen]
    runs += [(operation, schemathesis.GenerationMode.NEGATIVE) for operation in chosen
             if operation.method.upper() == "POST"]
    for operation, mode in runs:
        @settings(max_examples=20, derandomize=True, deadline=None, database=None,
                  suppress_health_check=list(HealthCheck))
        @given(case=operation.as_strategy(generation_mode=mode))
        def call(case):
            response = case.call(headers=headers)
            if response.status_code >= 500:
                failures.append((operation.path, case.path_parameters, case.body,
                                 response.status_code, response.text[:300]))

        call()
    assert failures == []


@pytest.fixture
def admin_client(tmp_path):
    """A test client over a fresh catalogue with the Brackwater people, and an admin token."""
    from tests.api.api_helpers import make_tokens
    from tests.catalogue.stage_helpers import set_up_people
    from tests.conftest import Cli

    url = f"sqlite:///{tmp_path / 'catalogue.db'}"
    assert Cli(url)("init").exit_code == 0
    set_up_people(Cli(url))
    secret = make_tokens(url)["admin"]
    client = create_app(url, pages=False).test_client()
    client.environ_base["HTTP_AUTHORIZATION"] = f"Bearer {secret}"
    return client


def test_every_published_body_schema_is_the_one_the_server_checks(admin_client):
    """For each operation with a JSON body, a body with a field the published schema does not
    allow is refused with 400 naming that field (jsonschema, draft 2020-12, checks the bodies
    against these very schemas), before any authorisation or change."""
    document = admin_client.get("/api/v1/openapi.json").json
    checked = 0
    for path, item in document["paths"].items():
        for method, operation in item.items():
            body = operation.get("requestBody", {}).get("content", {}).get("application/json")
            if body is None or body["schema"].get("additionalProperties") is not False:
                continue
            numbered = re.sub(r"\{(version|token_id|report_id)\}", "1", path)
            concrete = re.sub(r"\{(\w+)\}", "x", numbered)
            response = admin_client.open(concrete, method=method.upper(),
                                         json={"not_a_field_we_publish": 1})
            assert response.status_code == 400, (path, method, response.json)
            assert response.json["place"].endswith("not_a_field_we_publish"), response.json
            checked += 1
    assert checked >= 8


@pytest.mark.parametrize("body, place, words", [
    ({"stage": 5}, "body/stage", "expected string, got integer"),
    ({"stage": "live", "waivers": [{"gate": "slice-guard"}]}, "body/waivers/0/reason",
     "missing field 'reason'"),
    ({"stage": "x" * 101}, "body/stage", "longer than 100 characters"),
    ({}, "body/stage", "missing field 'stage'"),
])
def test_a_body_that_breaks_its_schema_names_the_field(admin_client, body, place, words):
    response = admin_client.post("/api/v1/models/m/versions/1/promote", json=body)
    assert response.status_code == 400
    assert response.json["place"] == place and words in response.json["detail"]
