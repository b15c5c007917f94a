"""The HTTP client against a live server on loopback: the same JSON, the same errors."""

from __future__ import annotations


import pytest

from registry.cli.remote import ApiClient, RemoteError
from registry.errors import AlreadyExists, CatalogueUnavailable, Forbidden, NotFound
from registry.service.tokens import Unauthenticated

from tests.api.api_helpers import make_api, served
from tests.catalogue.helpers import INPUT_SCHEMA, write_version_files
from tests.catalogue.stage_helpers import policy_keeping


@pytest.fixture
def live(cli):
    api = make_api(cli)
    with served(api.client.application) as url:
        yield api, url


def test_the_client_drives_every_use_case_over_http(live, tmp_path):
    api, url = live
    admin = ApiClient(url, api.secrets["admin"])
    publisher = ApiClient(url, api.secrets["publisher"])
    approver = ApiClient(url, api.secrets["approver"])
    reader = ApiClient(url, api.secrets["reader"])

    assert reader.ping()["ok"] is True
    assert admin.create_model("m", "burst risk")["name"] == "m"
    admin.set_policy("m", policy_keeping({}, skippable=("shadow", "canary")))
    assert reader.show_policy("m")["own_policy"] is True
    document, manifest = write_version_files(tmp_path / "v1")
    registered = publisher.register("m", document, manifest)
    assert registered["version"] == 1 and registered["created"] is True
    assert publisher.register("m", document, manifest)["created"] is False
    document2, manifest2 = write_version_files(tmp_path / "v2", document=b"two")
    assert publisher.register("m", document2, manifest2)["version"] == 2

    assert reader.check("m", 1, "live")["would_move"] is True
    assert approver.approve("m", 1, "live", "looked at it")["recorded"] is True
    assert approver.promote("m", 1, "live", expect_holder=None)["moved"] is True
    holder, etag = reader.stage_holder("m", "live")
    assert holder["version"] == 1 and holder["document_digest"] == registered["document_digest"]
    assert reader.stage_holder("m", "live", etag=etag) == (None, etag)
    promoted = approver.promote("m", 2, "live")
    assert promoted["moved"] and promoted["displaced"] == 1
    rolled = approver.rollback("m", "live")
    assert rolled["moved"] and reader.status("m")["stages"]["live"] == [1]
    assert reader.report(rolled["report_id"])["passed"] is True
    assert publisher.retire("m", 2, "superseded")["retired"] is True
    assert [e["event"] for e in reader.history("m")["events"]]
    assert reader.show_model("m")["model"]["versions"] == 2
    assert [m["name"] for m in reader.list_models()["models"]] == ["m"]

    assert admin.grant_role("sven.berg", "publisher")["granted"] is True
    assert "sven.berg" in reader.list_users()["users"]
    assert admin.revoke_role("sven.berg", "publisher")["revoked"] is True
    made = admin.create_token("ines.okafor", "reader", expires="7d", label="ci")
    assert made["secret"].startswith("lkt_")
    assert admin.revoke_token(made["token"]["id"])["revoked_at"]
    assert any(t["label"] == "ci" for t in admin.list_tokens()["tokens"])
    assert admin.verify_audit()["ok"] is True
    assert reader.check_schemas(INPUT_SCHEMA, INPUT_SCHEMA)["compatible"] is True


def test_the_client_raises_the_error_the_problem_document_names(live):
    api, url = live
    reader = ApiClient(url, api.secrets["reader"])
    admin = ApiClient(url, api.secrets["admin"])
    with pytest.raises(NotFound):
        reader.show_model("nothing")
    with pytest.raises(Forbidden):
        reader.create_model("m")
    admin.create_model("m")
    with pytest.raises(AlreadyExists) as raised:
        admin.create_model("m")
    assert raised.value.exit_code == 2
    with pytest.raises(Unauthenticated):
        ApiClient(url, "lkt_wrong").list_models()
    with pytest.raises(RemoteError) as raised:
        admin.request("POST", "/models", data=b"name=x", content_type="text/plain")
    assert raised.value.http_status == 415


def test_an_unreachable_server_is_a_one_line_error():
    with pytest.raises(CatalogueUnavailable, match="cannot reach"):
        ApiClient("http://127.0.0.1:9", "lkt_x", timeout=2).ping()
