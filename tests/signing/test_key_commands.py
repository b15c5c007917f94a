"""`key create|list|rotate` and GET /api/v1/keys, on every configured database."""

from __future__ import annotations

import stat

from registry.signing.keys import load_signing_key

from tests.catalogue.stage_helpers import set_up_people

ADMIN = "mara.kowalczyk"


def test_a_catalogue_without_a_key_says_nothing_is_signed(cli):
    assert cli.json("key", "list") == {"keys": []}
    assert "nothing is signed" in cli("key", "list").output


def test_key_create_writes_the_file_and_records_the_public_half(cli, signing_key_file):
    set_up_people(cli)
    created = cli.json("key", "create", user=ADMIN)
    assert stat.S_IMODE(signing_key_file.stat().st_mode) == 0o600
    assert created["id"] == load_signing_key(signing_key_file).key_id
    listed = cli.json("key", "list")["keys"]
    assert [(k["id"], k["algorithm"], k["retired_at"]) for k in listed] == \
        [(created["id"], "ed25519", None)]
    assert listed[0]["public_key"].startswith("-----BEGIN PUBLIC KEY-----")
    again = cli("key", "create", user=ADMIN)
    assert again.exit_code == 2 and "key rotate" in again.stderr


def test_key_create_and_rotate_are_for_admins(cli, signing_key_file):
    set_up_people(cli)
    refused = cli("key", "create", user="ines.okafor")
    assert refused.exit_code == 2 and "admin" in refused.stderr
    assert not signing_key_file.exists()
    assert cli.json("key", "list") == {"keys": []}


def test_rotate_retires_the_old_key_and_keeps_its_file_aside(cli, signing_key_file):
    set_up_people(cli)
    first = cli.json("key", "create", user=ADMIN)
    second = cli.json("key", "rotate", user=ADMIN)
    assert second["retired"] == first["id"] and second["id"] != first["id"]
    assert load_signing_key(signing_key_file).key_id == second["id"]
    kept = signing_key_file.with_name(f"signing.key.retired-{first['id'][:16]}")
    assert load_signing_key(kept).key_id == first["id"]
    listed = {k["id"]: k for k in cli.json("key", "list")["keys"]}
    assert listed[first["id"]]["retired_at"] is not None
    assert listed[second["id"]]["retired_at"] is None
    assert cli.json("audit", "verify")["ok"]


def test_an_existing_key_file_is_adopted_rather_than_replaced(cli, signing_key_file):
    from registry.signing.keys import create_signing_key_file

    made = create_signing_key_file(signing_key_file)
    set_up_people(cli)
    created = cli.json("key", "create", user=ADMIN)
    assert created["id"] == made.key_id and created["created_file"] is False


def test_a_catalogue_held_open_signs_with_a_key_made_or_rotated_after_it_opened(
        cli, catalogue, signing_key_file):
    """A server opens its catalogue once and keeps it for days; `key create` and `key rotate`
    run in another process must change what it signs with, at the next write, not at restart."""
    assert catalogue.signing_key is None
    set_up_people(cli)
    created = cli.json("key", "create", user=ADMIN)
    assert catalogue.signing_key.key_id == created["id"]
    rotated = cli.json("key", "rotate", user=ADMIN)
    assert catalogue.signing_key.key_id == rotated["id"]
    signing_key_file.unlink()
    assert catalogue.signing_key is None
