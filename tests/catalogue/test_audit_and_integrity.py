"""The audit chain and `audit verify`: every change is logged; tampering is found and named."""

from __future__ import annotations

from sqlalchemy import text

from tests.catalogue.helpers import write_version_files


def _registered(cli, tmp_path):
    cli.json("model", "create", "m")
    document, manifest = write_version_files(tmp_path)
    cli.json("register", "m", str(document), "--manifest", str(manifest))


def _edit(catalogue, sql: str, **params):
    with catalogue.engine.begin() as connection:
        connection.execute(text(sql), params)


def test_every_change_writes_a_chained_event_and_verify_is_clean(cli, tmp_path, catalogue):
    _registered(cli, tmp_path)
    report = cli.json("audit", "verify")
    assert report["ok"] is True and report["events"] == 2 and report["versions"] == 1
    with catalogue.engine.connect() as connection:
        rows = connection.execute(text(
            "SELECT sequence, action, actor, previous_hash, hash FROM audit_events "
            "ORDER BY sequence")).all()
    assert [r.action for r in rows] == ["model.create", "version.register"]
    assert rows[1].previous_hash == rows[0].hash
    assert all(r.actor == "ines.okafor" for r in rows)


def test_verify_names_an_edited_event_row(cli, tmp_path, catalogue):
    _registered(cli, tmp_path)
    _edit(catalogue, "UPDATE audit_events SET actor = 'mallory' WHERE sequence = 1")
    result = cli("audit", "verify", "--json")
    assert result.exit_code == 1
    import json
    report = json.loads(result.stdout)
    assert report["ok"] is False and report["first_broken_link"] == "audit event 1"


def test_verify_finds_a_removed_newest_event(cli, tmp_path, catalogue):
    _registered(cli, tmp_path)
    _edit(catalogue, "DELETE FROM audit_events WHERE sequence = 2")
    result = cli("audit", "verify")
    assert result.exit_code == 1 and "removed" in result.stdout


def test_verify_names_an_edited_blob(cli, tmp_path, catalogue):
    _registered(cli, tmp_path)
    _edit(catalogue, "UPDATE blob_chunks SET content = :c", c=b"tampered")
    result = cli("audit", "verify")
    assert result.exit_code == 1 and "blob" in result.stdout


def test_verify_names_a_version_changed_behind_its_back(cli, tmp_path, catalogue):
    _registered(cli, tmp_path)
    _edit(catalogue, "UPDATE versions SET description = 'rewritten'")
    result = cli("audit", "verify")
    assert result.exit_code == 1 and "model/m/version/1" in result.stdout


def test_verify_catches_a_rewritten_registration_digest(cli, tmp_path, catalogue):
    _registered(cli, tmp_path)
    _edit(catalogue, "UPDATE versions SET description = 'rewritten', registration_digest = :d",
          d="0" * 64)
    result = cli("audit", "verify")
    assert result.exit_code == 1 and "model/m/version/1" in result.stdout
