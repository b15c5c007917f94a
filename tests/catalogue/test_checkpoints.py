"""Signed checkpoints: written at stage changes and every CHECKPOINT_EVERY events, printed by
`audit checkpoint`, and `audit verify --against` finds a history that was cut or rewritten."""

from __future__ import annotations

import json

from registry.signing.checkpoints import from_document
from registry.store import sealing
from registry.store.catalogue import open_catalogue

from tests.catalogue.stage_helpers import register, set_up_people
from tests.catalogue.tamper_helpers import RawDatabase

ADMIN = "mara.kowalczyk"


def _keyed(cli):
    set_up_people(cli)
    cli.json("key", "create", user=ADMIN)
    cli.json("model", "create", "m", user=ADMIN)


def _checkpoints(url) -> list[dict]:
    catalogue = open_catalogue(url)
    try:
        return RawDatabase(catalogue).rows("checkpoints")
    finally:
        catalogue.close()


def test_without_a_key_nothing_is_signed_and_the_catalogue_still_works(cli, tmp_path):
    set_up_people(cli)
    cli.json("model", "create", "m", user=ADMIN)
    register(cli, tmp_path, "one")
    assert _checkpoints(cli.url) == []
    refused = cli("audit", "checkpoint")
    assert refused.exit_code == 2 and "nothing is signed" in refused.stderr
    report = cli.json("audit", "verify")
    assert report["ok"] and report["signed"] is False and report["newest_checkpoint"] is None


def test_a_stage_change_signs_a_checkpoint_of_the_new_head(cli, tmp_path):
    _keyed(cli)
    before = len(_checkpoints(cli.url))
    register(cli, tmp_path, "one")  # enters the first stage of the ladder
    after = _checkpoints(cli.url)
    assert len(after) == before + 1
    head = cli.json("audit", "verify")
    assert head["newest_checkpoint"]["sequence"] == head["events"] == after[-1]["sequence"]


def test_every_hundred_events_are_signed_even_without_a_stage_change(cli, monkeypatch):
    _keyed(cli)
    monkeypatch.setattr(sealing, "CHECKPOINT_EVERY", 3)
    for user in ("a.one", "a.two", "a.three", "a.four"):
        cli.json("user", "grant", user, "reader", user=ADMIN)
    signed = [row["sequence"] for row in _checkpoints(cli.url)]
    assert any(sequence % 3 == 0 for sequence in signed[1:])


def test_audit_checkpoint_prints_a_document_that_verifies_on_its_own(cli, tmp_path):
    _keyed(cli)
    cli.json("user", "grant", "a.one", "reader", user=ADMIN)  # no checkpoint for this one
    document = cli.json("audit", "checkpoint")
    checkpoint, _ = from_document(document, place="test")
    assert checkpoint.sequence == cli.json("audit", "verify")["events"]
    assert cli.json("audit", "checkpoint") == document  # the head has not moved: same one
    kept = tmp_path / "kept.json"
    kept.write_text(json.dumps(document))
    assert cli.json("audit", "verify", "--against", str(kept))["ok"]
    register(cli, tmp_path, "one")
    assert cli.json("audit", "verify", "--against", str(kept))["ok"]  # still extends it


def test_a_cut_history_fails_against_a_checkpoint_kept_outside(cli, tmp_path):
    _keyed(cli)
    register(cli, tmp_path, "one")
    kept = tmp_path / "kept.json"
    kept.write_text(json.dumps(cli.json("audit", "checkpoint")))
    sequence = json.loads(kept.read_text())["sequence"]
    # An attacker cuts the newest events and the checkpoints that name them, and moves the
    # head back: the chain left behind is consistent in itself.
    catalogue = open_catalogue(cli.url)
    raw = RawDatabase(catalogue)
    keep = sequence - 2
    raw.execute("DELETE FROM audit_events WHERE sequence > ?", [keep])
    raw.execute("DELETE FROM checkpoints WHERE sequence > ?", [keep])
    (kept_hash,) = [r["hash"] for r in raw.rows("audit_events") if r["sequence"] == keep]
    raw.execute("UPDATE audit_head SET sequence = ?, hash = ?", [keep, kept_hash])
    catalogue.close()
    report = cli.json("audit", "verify", "--against", str(kept), expect=1)
    assert report["first_broken_link"] == f"checkpoint {kept} (event {sequence})"
    assert "history was cut" in report["findings"][0]["problem"]


def test_a_rewritten_history_fails_against_a_checkpoint_kept_outside(cli, tmp_path):
    _keyed(cli)
    register(cli, tmp_path, "one")
    kept = tmp_path / "kept.json"
    document = cli.json("audit", "checkpoint")
    kept.write_text(json.dumps(document))
    catalogue = open_catalogue(cli.url)
    raw = RawDatabase(catalogue)
    raw.execute("UPDATE audit_events SET hash = ? WHERE sequence = ?",
                ["0" * 64, document["sequence"]])
    catalogue.close()
    report = cli.json("audit", "verify", "--against", str(kept), expect=1)
    assert any(f["place"] == f"checkpoint {kept} (event {document['sequence']})"
               and "rewritten" in f["problem"] for f in report["findings"])


def test_an_edited_checkpoint_file_is_bad_input_naming_it(cli, tmp_path):
    _keyed(cli)
    document = cli.json("audit", "checkpoint")
    kept = tmp_path / "kept.json"
    kept.write_text(json.dumps(document | {"sequence": document["sequence"] + 1}))
    result = cli("audit", "verify", "--against", str(kept))
    assert result.exit_code == 2
    assert result.stderr.startswith(f"lockkeeper: checkpoint {kept}: its signature does not")
    kept.write_text("{")
    assert cli("audit", "verify", "--against", str(kept)).exit_code == 2


def test_a_local_checkpoint_beyond_the_head_shows_a_cut(cli, tmp_path):
    _keyed(cli)
    register(cli, tmp_path, "one")
    catalogue = open_catalogue(cli.url)
    raw = RawDatabase(catalogue)
    head = raw.rows("audit_head")[0]
    raw.execute("DELETE FROM audit_events WHERE sequence = ?", [head["sequence"]])
    (previous,) = [r["hash"] for r in raw.rows("audit_events")
                   if r["sequence"] == head["sequence"] - 1]
    raw.execute("UPDATE audit_head SET sequence = ?, hash = ?", [head["sequence"] - 1, previous])
    catalogue.close()
    report = cli.json("audit", "verify", expect=1)
    assert any("history was cut" in f["problem"] for f in report["findings"])
