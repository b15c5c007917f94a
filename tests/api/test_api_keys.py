"""GET /api/v1/keys: the public signing keys, for any reader (a serving system, say)."""

from __future__ import annotations


def test_the_api_serves_the_public_keys_to_a_reader(cli, api):
    assert api.get("/keys").get_json() == {"keys": []}
    created = cli.json("key", "create", user="mara.kowalczyk")
    response = api.get("/keys", role="reader")
    assert response.status_code == 200
    (key,) = response.get_json()["keys"]
    assert (key["id"], key["algorithm"], key["public_key"], key["retired_at"]) == (
        created["id"], "ed25519", created["public_key"], None)
    assert api.get("/keys", role=None).status_code == 401
