"""Bearer tokens: kept as hashes, refused when expired or revoked, and the CLI that makes them."""

from __future__ import annotations

import hashlib
import json
import time
from datetime import UTC, datetime, timedelta

import pytest
from sqlalchemy import select

from registry.errors import Forbidden, UserError
from registry.service import tokens
from registry.service.actors import Actor
from registry.store import tables as t

from tests.api.api_helpers import ADMIN, problem


def test_the_catalogue_keeps_only_the_sha256_of_a_secret(api, catalogue):
    with catalogue.sessions() as session:
        stored = set(session.execute(select(t.ApiToken.token_hash)).scalars())
    for secret in api.secrets.values():
        assert secret not in stored
        assert hashlib.sha256(secret.encode()).hexdigest() in stored


def test_an_expired_token_is_refused(api, catalogue):
    created = tokens.create_token(catalogue, "ines.okafor", "publisher", ADMIN,
                                  expires_at=datetime.now(UTC) + timedelta(seconds=1))
    headers = {"Authorization": f"Bearer {created.secret}"}
    assert api.client.get("/api/v1/models", headers=headers).status_code == 200
    with pytest.raises(tokens.Unauthenticated, match="expired"):
        tokens.authenticate(catalogue, created.secret,
                            now=datetime.now(UTC) + timedelta(seconds=2))
    time.sleep(1.1)
    # The server remembered this token a moment ago; it still checks the expiry on every use.
    refused = api.client.get("/api/v1/models", headers=headers)
    assert refused.status_code == 401
    assert "expired" in problem(refused)["detail"]
    assert refused.headers["WWW-Authenticate"].startswith("Bearer")


def test_a_revoked_token_stops_working_on_the_next_request(api):
    listed = api.get("/tokens", role="admin").json["tokens"]
    publisher = next(t for t in listed if t["role"] == "publisher")
    assert api.get("/models", role="publisher").status_code == 200
    revoked = api.delete(f"/tokens/{publisher['id']}", role="admin")
    assert revoked.status_code == 200 and revoked.json["revoked_at"]
    refused = api.get("/models", role="publisher")
    assert refused.status_code == 401 and "revoked" in problem(refused)["detail"]


def test_a_token_loses_its_role_when_the_user_does(api, tmp_path):
    assert api.delete("/users/ines.okafor/roles/publisher").status_code == 200
    # Still a valid token, but it now only reads.
    assert api.get("/models", role="publisher").status_code == 200
    assert api.register("m", tmp_path, role="publisher").status_code == 403


@pytest.mark.parametrize("header", ["Bearer lkt_not-a-token", "Bearer nonsense", "Basic abc",
                                    "Bearer ", "lkt_x"])
def test_a_bad_authorization_header_is_a_401_problem(api, header):
    response = api.client.get("/api/v1/models", headers={"Authorization": header})
    assert response.status_code == 401
    assert problem(response)["type"].endswith("/unauthenticated")


def test_a_token_cannot_carry_a_role_its_user_does_not_hold(catalogue, api):
    with pytest.raises(UserError, match="does not hold the approver role"):
        tokens.create_token(catalogue, "ines.okafor", "approver", ADMIN)
    with pytest.raises(Forbidden):
        tokens.create_token(catalogue, "ines.okafor", "reader",
                            Actor("ines.okafor", frozenset({"publisher"})))


@pytest.mark.parametrize("text", ["30", "tomorrow", "2001-01-01", "0d", "-3d"])
def test_a_bad_expiry_is_refused(text):
    with pytest.raises(UserError):
        tokens.parse_expiry(text)


def test_expiry_takes_durations_and_iso_dates():
    now = datetime(2026, 12, 1, tzinfo=UTC)
    assert tokens.parse_expiry("30d", now=now) == now + timedelta(days=30)
    assert tokens.parse_expiry("12h", now=now) == now + timedelta(hours=12)
    assert tokens.parse_expiry("2027-01-31", now=now) == datetime(2027, 1, 31, tzinfo=UTC)


def test_the_first_admin_token_bootstraps_an_empty_catalogue(empty_catalogue_url):
    from tests.conftest import Cli

    cli = Cli(empty_catalogue_url)
    assert cli("init").exit_code == 0
    refused = cli("token", "create", "--user", "ines.okafor", "--role", "publisher",
                  user="ines.okafor")
    assert refused.exit_code == 2 and "no admin yet" in refused.stderr
    first = cli.json("token", "create", "--user", "mara.kowalczyk", "--role", "admin",
                     "--label", "first", user="mara.kowalczyk")
    assert first["secret"].startswith("lkt_") and first["token"]["role"] == "admin"
    assert cli.json("user", "list")["users"] == {"mara.kowalczyk": ["admin"]}
    # From now on only an admin makes tokens.
    assert cli("token", "create", "--user", "x", "--role", "reader",
               user="ines.okafor").exit_code == 2
    listed = cli.json("token", "list", user="mara.kowalczyk")["tokens"]
    assert [t["label"] for t in listed] == ["first"] and "secret" not in json.dumps(listed)
    revoked = cli.json("token", "revoke", str(listed[0]["id"]), user="mara.kowalczyk")
    assert revoked["revoked_at"]


def test_token_cli_refuses_a_bad_expiry_in_one_line(cli):
    result = cli("token", "create", "--user", "mara.kowalczyk", "--role", "admin",
                 "--expires", "soon", user="mara.kowalczyk")
    assert result.exit_code == 2 and result.stderr.count("\n") == 1


def test_tokens_over_http_show_the_secret_once(api):
    made = api.post("/tokens", {"user": "ines.okafor", "role": "publisher", "expires": "30d",
                                "label": "training pipeline"})
    assert made.status_code == 201 and made.json["secret"].startswith("lkt_")
    listed = api.get("/tokens", role="admin")
    assert made.json["secret"] not in listed.get_data(as_text=True)
    headers = {"Authorization": f"Bearer {made.json['secret']}"}
    assert api.client.get("/api/v1/models", headers=headers).status_code == 200
