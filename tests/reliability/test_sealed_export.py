"""Sealed exports: the manifest is signed; `import --trust` checks the seal, replays the exported
chain and refuses any row it does not back; the folder is read without following a link or
opening anything but a regular file; duplicate and malformed keys are bad input naming the
file and line. On every configured database."""

from __future__ import annotations

import hashlib
import json
import os
from pathlib import Path

import pytest

from registry.canonical_json import canonical_json
from registry.store.audit import event_hash

from tests.catalogue.stage_helpers import set_up_people
from tests.conftest import Cli, run_cli
from tests.reliability.test_backup import fresh_catalogue_url

pytestmark = pytest.mark.reliability
ADMIN = "mara.kowalczyk"


def _sealed_export(cli: Cli, tmp_path: Path) -> tuple[Path, Path]:
    set_up_people(cli)
    cli.json("model", "create", "main-burst-risk", user=ADMIN)
    key = cli.json("key", "create", user=ADMIN)
    public = tmp_path / "catalogue.pub.pem"
    public.write_text(key["public_key"])
    folder = tmp_path / "export"
    exported = cli.json("export", str(folder))
    assert exported["sealed_by"] == key["id"]
    return folder, public


def _import(folder: Path, tmp_path: Path, *extra: str):
    """Import into a fresh catalogue: the exit code, and the summary or the error's place and
    message (parsed from its one line on stderr)."""
    with fresh_catalogue_url("sqlite", tmp_path) as there:
        result = run_cli(["--db", there, "import", str(folder), *extra, "--json"])
        if result.exit_code == 0:
            assert Cli(there).json("audit", "verify")["ok"] is True
            return 0, json.loads(result.stdout)
        (line,) = result.stderr.strip().splitlines()
        _, place, message = line.split(": ", 2)
        assert "Traceback" not in result.stderr
        return result.exit_code, {"error": {"place": place, "message": message}}


def _rewrite_table(folder: Path, table: str, lines: list[str]) -> None:
    """Replace a table file and make the manifest agree with it again, as a forger would."""
    path = folder / "tables" / f"{table}.jsonl"
    content = "".join(line + "\n" for line in lines).encode()
    path.write_bytes(content)
    manifest = json.loads((folder / "manifest.json").read_text())
    manifest["files"][f"tables/{table}.jsonl"] = {
        "rows": len(lines), "sha256": hashlib.sha256(content).hexdigest(), "bytes": len(content)}
    (folder / "manifest.json").write_text(json.dumps(manifest))


def _lines(folder: Path, table: str) -> list[str]:
    return (folder / "tables" / f"{table}.jsonl").read_text().splitlines()


def test_a_sealed_export_imports_with_its_public_key_trusted(cli, tmp_path):
    folder, public = _sealed_export(cli, tmp_path)
    code, summary = _import(folder, tmp_path, "--trust", str(public))
    assert code == 0 and summary["trusted"] is True


def test_a_forged_admin_with_recomputed_digests_is_refused_naming_file_and_line(cli, tmp_path):
    folder, public = _sealed_export(cli, tmp_path)
    grants = _lines(folder, "role_grants")
    forged = json.loads(grants[0]) | {"user": "intruder", "role": "admin"}
    _rewrite_table(folder, "role_grants", grants + [json.dumps(forged, sort_keys=True)])
    code, document = _import(folder, tmp_path)  # even without --trust: no event backs it
    assert code == 2
    assert document["error"]["place"] == "tables/role_grants.jsonl"
    assert f"line {len(grants) + 1}" in document["error"]["message"]
    assert "no audit event wrote this row" in document["error"]["message"]
    code, document = _import(folder, tmp_path, "--trust", str(public))
    assert code == 2 and document["error"]["place"] == "manifest.json"


def test_a_forged_chain_backing_a_forged_admin_fails_only_the_seal(cli, tmp_path):
    """Without the key a forger can rebuild every digest and hash; only the seal stops it."""
    folder, public = _sealed_export(cli, tmp_path)
    grants = _lines(folder, "role_grants")
    forged_grant = json.loads(grants[0]) | {"user": "intruder", "role": "admin"}
    _rewrite_table(folder, "role_grants", grants + [json.dumps(forged_grant, sort_keys=True)])
    events = [json.loads(line) for line in _lines(folder, "audit_events")]
    from registry.store import tables as t
    from registry.store.row_digests import column_digests, key_of
    from registry.service.export_rows import _typed_row

    table = t.Base.metadata.tables["role_grants"]
    row = _typed_row(table, forged_grant, "forged")
    rows = [{"table": "role_grants", "key": list(key_of(table, row)),
             "columns": column_digests(table, row)}]
    last = events[-1]
    sequence = last["sequence"] + 1
    details = {"role": "admin", "bootstrap": False}
    forged_event = {"sequence": sequence, "occurred_at": last["occurred_at"], "actor": ADMIN,
                    "action": "role.grant", "subject": "user/intruder",
                    "details_json": canonical_json(details).decode(),
                    "previous_hash": last["hash"],
                    "rows_json": canonical_json(rows).decode()}
    forged_event["hash"] = event_hash(sequence, last["occurred_at"], ADMIN, "role.grant",
                                      "user/intruder", details, last["hash"], rows)
    _rewrite_table(folder, "audit_events",
                   _lines(folder, "audit_events") + [json.dumps(forged_event, sort_keys=True)])
    _rewrite_table(folder, "audit_head", [json.dumps(
        {"id": 1, "sequence": sequence, "hash": forged_event["hash"]})])
    manifest = json.loads((folder / "manifest.json").read_text())
    manifest["audit_head"] = {"sequence": sequence, "hash": forged_event["hash"]}
    (folder / "manifest.json").write_text(json.dumps(manifest))
    assert _import(folder, tmp_path)[0] == 0  # consistent in itself: why --trust matters
    code, document = _import(folder, tmp_path, "--trust", str(public))
    assert code == 2 and document["error"]["place"] == "manifest.json"
    assert "seal" in document["error"]["message"]


def test_an_unsealed_export_or_another_key_is_not_trusted(cli, tmp_path):
    folder, public = _sealed_export(cli, tmp_path)
    other = tmp_path / "other.pem"
    from registry.signing.keys import create_signing_key_file

    other.write_text(create_signing_key_file(tmp_path / "other.key").public_key_pem())
    code, document = _import(folder, tmp_path, "--trust", str(other))
    assert code == 2 and "not by the trusted key" in document["error"]["message"]
    manifest = json.loads((folder / "manifest.json").read_text())
    del manifest["seal"]
    (folder / "manifest.json").write_text(json.dumps(manifest))
    code, document = _import(folder, tmp_path, "--trust", str(public))
    assert code == 2 and "not sealed" in document["error"]["message"]


def test_a_stage_holding_without_its_promotion_is_refused(cli, tmp_path):
    from tests.catalogue.stage_helpers import register

    set_up_people(cli)
    cli.json("model", "create", "m", user=ADMIN)
    register(cli, tmp_path, "one", model="m")
    register(cli, tmp_path, "two", model="m")
    folder = tmp_path / "export"
    cli.json("export", str(folder))
    holdings = [json.loads(line) for line in _lines(folder, "stage_holdings")]
    holdings[0]["version_id"] = holdings[1]["version_id"]
    holdings[0]["stage"] = "live"
    _rewrite_table(folder, "stage_holdings", [json.dumps(h, sort_keys=True) for h in holdings])
    code, document = _import(folder, tmp_path)
    assert code == 2 and document["error"]["place"] == "tables/stage_holdings.jsonl"
    assert "line 1" in document["error"]["message"]


@pytest.mark.parametrize("damage, expected", [
    ("duplicate-id", "duplicate key (id="),
    ("text-id", "column id is not a 32-bit integer"),
    ("repeated-json-key", "appears twice"),
    ("duplicate-name", "duplicate key (name="),
])
def test_duplicate_or_malformed_keys_are_bad_input_naming_file_and_line(cli, tmp_path, damage,
                                                                        expected):
    set_up_people(cli)
    cli.json("model", "create", "main-burst-risk", user=ADMIN)
    cli.json("model", "create", "night-flow-leak", user=ADMIN)
    folder = tmp_path / "export"
    cli.json("export", str(folder))
    models = _lines(folder, "models")
    first, second = json.loads(models[0]), json.loads(models[1])
    if damage == "duplicate-id":
        second["id"] = first["id"]
        lines = [models[0], json.dumps(second)]
    elif damage == "text-id":
        lines = [models[0], json.dumps(second | {"id": "2x"})]
    elif damage == "repeated-json-key":
        lines = [models[0], models[1].replace('{"', '{"id": 7, "', 1)]
    else:
        lines = [models[0], json.dumps(second | {"name": first["name"]})]
    _rewrite_table(folder, "models", lines)
    code, document = _import(folder, tmp_path)
    assert code == 2, document
    assert document["error"]["place"] == "tables/models.jsonl line 2"
    assert expected in document["error"]["message"]


def test_links_and_special_files_are_never_followed_or_opened(cli, tmp_path):
    set_up_people(cli)
    folder = tmp_path / "export"
    cli.json("export", str(folder))
    # a table file replaced by a link to the very same bytes
    target = folder / "tables" / "models.jsonl"
    moved = tmp_path / "models.jsonl"
    target.rename(moved)
    target.symlink_to(moved)
    code, document = _import(folder, tmp_path)
    assert code == 2 and document["error"]["place"] == "tables/models.jsonl"
    assert "links are never followed" in document["error"]["message"]
    target.unlink()
    os.mkfifo(target)  # would block a reader that opened it blindly
    code, document = _import(folder, tmp_path)
    assert code == 2 and document["error"]["place"] == "tables/models.jsonl"
    target.unlink()
    moved.rename(target)
    linked_folder = tmp_path / "linked-export"
    linked_folder.symlink_to(folder)
    code, document = _import(linked_folder, tmp_path)
    assert code == 2 and document["error"]["place"] == "DIR"
    assert _import(folder, tmp_path)[0] == 0


def test_a_file_larger_than_its_manifest_says_is_refused_before_it_is_read(cli, tmp_path):
    set_up_people(cli)
    folder = tmp_path / "export"
    cli.json("export", str(folder))
    with (folder / "tables" / "role_grants.jsonl").open("ab") as out:
        out.write(b" " * 1_000_000)
    code, document = _import(folder, tmp_path)
    assert code == 2 and document["error"]["place"] == "tables/role_grants.jsonl"
    assert "the manifest says" in document["error"]["message"]
