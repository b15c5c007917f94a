"""Release statements written with every move into or out of an exclusive stage, shown, served,
and checked offline by `release verify`, on every configured database."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from click.testing import CliRunner
from securesystemslib.dsse import Envelope as ReferenceEnvelope
from securesystemslib.signer import SSlibKey

from registry.canonical_json import digest_of
from registry.cli import main
from registry.service.stages import find_report
from registry.signing import dsse
from registry.signing.statements import parse_statement

from tests.api.api_helpers import make_tokens, open_api, served
from tests.catalogue.stage_helpers import register, set_up_model

ADMIN, APPROVER, SECOND_APPROVER = "mara.kowalczyk", "tomas.lindqvist", "priya.raman"


@pytest.fixture
def story(cli, tmp_path):
    """A model with two versions, a signing key, and v1 live."""
    set_up_model(cli, tmp_path, {"live": ["approvals"]}, skippable=("shadow", "canary"))
    cli.json("key", "create", user=ADMIN)
    for tag in ("v1", "v2"):
        register(cli, tmp_path, tag)
    cli.json("approve", "m", "1", "--for", "live", "--note", "read the lineage",
             user=SECOND_APPROVER)
    cli.json("promote", "m", "1", "--to", "live", user=APPROVER)
    key = tmp_path / "catalogue.pub.pem"
    assert cli("key", "public", "-o", str(key)).exit_code == 0
    assert key.read_text() == cli.json("key", "list")["keys"][0]["public_key"]
    return key


def _fetch(cli, tmp_path: Path, name: str, stage: str = "live") -> tuple[Path, Path]:
    document, envelope = tmp_path / f"{name}.doc", tmp_path / f"{name}.release.json"
    cli.json("document", "get", "m", "--stage", stage, "-o", str(document))
    assert cli("release", "show", "m", "--stage", stage, "-o", str(envelope)).exit_code == 0
    return document, envelope


def _verify(cli, document: Path, envelope: Path, key: Path, *extra: str, expect: int = 0):
    return cli.json("release", "verify", str(document), str(envelope), "--key", str(key),
                    *extra, expect=expect)


def test_a_promotion_into_live_is_signed_and_verifies(cli, tmp_path, story):
    document, envelope = _fetch(cli, tmp_path, "live")
    verdict = _verify(cli, document, envelope, story, "--model", "m", "--stage", "live")
    assert verdict["verified"] is True and verdict["version"] == 1
    assert verdict["current"] is None  # no --server: currency not asked


def test_the_statement_quotes_the_gates_approvals_and_the_audit_event(cli, catalogue, tmp_path,
                                                                     story):
    _, envelope = _fetch(cli, tmp_path, "live")
    statement = parse_statement(dsse.parse(envelope.read_bytes()).payload)
    keys = cli.json("key", "list")["keys"]
    assert statement.signing_key_id == keys[0]["id"]
    assert statement.previous_holder is None and statement.holder_after == 1
    assert [(a.who, a.note) for a in statement.approvals] == [(SECOND_APPROVER,
                                                               "read the lineage")]
    history = cli.json("history", "m")
    report_id = [a for a in history["attempts"] if a["stage"] == "live"][-1]["id"]
    report = find_report(catalogue, report_id)
    assert statement.gate_report_digest == digest_of(report)
    assert [(g.gate, g.status) for g in statement.gates] == \
        [(r["gate"], r["status"]) for r in report["results"]]
    from sqlalchemy import text

    with catalogue.engine.connect() as connection:
        recorded = connection.execute(text(
            "SELECT action, hash FROM audit_events WHERE sequence = :n"),
            {"n": statement.audit_event_sequence}).one()
    assert recorded == ("stage.promote", statement.audit_event_hash)


def test_the_independent_verifier_accepts_the_catalogues_envelope(cli, tmp_path, story):
    from cryptography.hazmat.primitives import serialization

    _, envelope = _fetch(cli, tmp_path, "live")
    public = serialization.load_pem_public_key(story.read_bytes())
    key_id = cli.json("key", "list")["keys"][0]["id"]
    reference = ReferenceEnvelope.from_dict(json.loads(envelope.read_bytes()))
    assert list(reference.verify([SSlibKey.from_crypto(public, keyid=key_id)], 1)) == [key_id]


def test_a_changed_byte_of_the_document_is_refused(cli, tmp_path, story):
    document, envelope = _fetch(cli, tmp_path, "live")
    data = bytearray(document.read_bytes())
    data[0] ^= 0x01
    document.write_bytes(bytes(data))
    verdict = _verify(cli, document, envelope, story, expect=1)
    assert verdict["verified"] is False and verdict["reason"] == "document-changed"


def test_other_model_other_stage_and_wrong_key_are_refused_by_name(cli, tmp_path, story):
    from registry.signing.keys import create_signing_key_file

    document, envelope = _fetch(cli, tmp_path, "live")
    assert _verify(cli, document, envelope, story, "--model", "other",
                   expect=1)["reason"] == "other-model"
    assert _verify(cli, document, envelope, story, "--stage", "canary",
                   expect=1)["reason"] == "other-stage"
    stranger = tmp_path / "stranger.pub.pem"
    stranger.write_text(create_signing_key_file(tmp_path / "stranger.key").public_key_pem())
    assert _verify(cli, document, envelope, stranger, expect=1)["reason"] == "wrong-key"


def test_a_rollback_supersedes_the_release_and_states_both_moves(cli, catalogue, tmp_path,
                                                                 story):
    cli.json("approve", "m", "2", "--for", "live", user=SECOND_APPROVER)
    cli.json("promote", "m", "2", "--to", "live", user=APPROVER)
    v2_document, v2_envelope = _fetch(cli, tmp_path, "v2")
    assert _verify(cli, v2_document, v2_envelope, story)["version"] == 2
    cli.json("rollback", "m", "--stage", "live", user=APPROVER)
    v1_document, v1_envelope = _fetch(cli, tmp_path, "v1-again")
    restored = parse_statement(dsse.parse(v1_envelope.read_bytes()).payload)
    assert (restored.version, restored.move, restored.reason, restored.previous_holder) == \
        (1, "entered", "rollback", 2)
    from registry.service.releases import releases_of_version

    left = releases_of_version(catalogue, "m", 2)
    assert [(r.stage, r.move) for r in left] == [("live", "entered"), ("live", "left")]
    # The v2 statement is still a valid signature over v2's document; only the catalogue can
    # say it is no longer current, which --server asks (below, over HTTP).
    assert _verify(cli, v1_document, v1_envelope, story)["version"] == 1
    # Every statement is audited, and the rollback's event hash it quotes is the one stored.
    assert cli.json("audit", "verify")["ok"] is True
    from sqlalchemy import text

    with catalogue.engine.connect() as connection:
        recorded = connection.execute(text(
            "SELECT count(*) FROM audit_events WHERE action = 'release.record'")).scalar()
    assert recorded == 4  # v1 and v2 entering live, then v2 leaving and v1 entering


def test_retiring_the_live_version_leaves_the_stage_without_a_release(cli, tmp_path, story):
    cli.json("retire", "m", "1", "--reason", "replaced by hand", user=APPROVER)
    shown = cli("release", "show", "m", "--stage", "live")
    assert shown.exit_code == 2 and "holds" in shown.stderr
    assert len(shown.stderr.strip().splitlines()) == 1


def test_promotions_into_shared_stages_write_no_statement(cli, tmp_path, story):
    cli.json("promote", "m", "2", "--to", "shadow", user=APPROVER)
    shown = cli("release", "show", "m", "--stage", "shadow")
    assert shown.exit_code == 2 and "release statement" in shown.stderr


def test_without_a_signing_key_the_statement_is_recorded_unsigned(cli, tmp_path,
                                                                 signing_key_file):
    set_up_model(cli, tmp_path, {}, skippable=("shadow", "canary"))
    register(cli, tmp_path, "v1")
    cli.json("promote", "m", "1", "--to", "live", user=APPROVER)
    document, envelope = _fetch(cli, tmp_path, "unsigned")
    assert json.loads(envelope.read_text())["signatures"] == []
    from registry.signing.keys import create_signing_key_file

    key = tmp_path / "some.pub.pem"
    key.write_text(create_signing_key_file(tmp_path / "some.key").public_key_pem())
    assert _verify(cli, document, envelope, key, expect=1)["reason"] == "not-signed"


@pytest.mark.parametrize("what", ["envelope", "key", "document"])
def test_unreadable_input_is_exit_2_in_one_line(cli, tmp_path, story, what):
    document, envelope = _fetch(cli, tmp_path, "live")
    if what == "envelope":
        envelope.write_text('{"payload": "not base64 !!", "payloadType": "x", "signatures": []}')
    elif what == "key":
        story.write_text("-----BEGIN PUBLIC KEY-----\nnonsense\n-----END PUBLIC KEY-----\n")
    else:
        document = tmp_path / "missing.doc"
    result = cli("release", "verify", str(document), str(envelope), "--key", str(story))
    assert result.exit_code == 2
    assert len(result.stderr.strip().splitlines()) == 1, result.stderr


def test_release_verify_needs_no_catalogue(tmp_path, story, cli):
    document, envelope = _fetch(cli, tmp_path, "live")
    result = CliRunner().invoke(main, ["--db", "postgresql+psycopg://nobody@127.0.0.1:1/none",
                                       "release", "verify", str(document), str(envelope),
                                       "--key", str(story)], catch_exceptions=False)
    assert result.exit_code == 0, result.output


def test_over_http_the_release_has_an_etag_and_a_superseded_one_is_refused(cli, tmp_path,
                                                                          story):
    api = open_api(cli.url, make_tokens(cli.url))
    with served(api.client.application) as url:
        release = api.get("/models/m/stages/live/release")
        assert release.status_code == 200
        assert release.headers["ETag"].startswith('"')
        assert api.get("/models/m/stages/live/release",
                       headers={"If-None-Match": release.headers["ETag"]}).status_code == 304
        document, envelope = _fetch(cli, tmp_path, "v1")
        assert envelope.read_bytes() == release.data
        token = ["--token", api.secrets["reader"]]

        def verify(expect: int):
            result = CliRunner().invoke(main, [*token, "release", "verify", str(document),
                                               str(envelope), "--key", str(story), "--server",
                                               url, "--json"], catch_exceptions=False)
            assert result.exit_code == expect, result.output
            return json.loads(result.stdout)

        assert verify(0)["current"] is True
        cli.json("approve", "m", "2", "--for", "live", user=SECOND_APPROVER)
        cli.json("promote", "m", "2", "--to", "live", user=APPROVER)
        superseded = verify(1)
        assert superseded["reason"] == "superseded" and superseded["current"] is False
        unknown = api.get("/models/m/stages/attic/release")
        assert unknown.status_code == 404


def test_key_public_prints_the_current_or_a_named_key(cli, tmp_path, story):
    first = cli.json("key", "list")["keys"][0]
    assert cli("key", "public").stdout.strip() == first["public_key"].strip()
    cli.json("key", "rotate", user=ADMIN)
    assert cli("key", "public", first["id"]).stdout.strip() == first["public_key"].strip()
    assert cli("key", "public").stdout.strip() != first["public_key"].strip()
    unknown = cli("key", "public", "ab" * 32)
    assert unknown.exit_code == 2 and len(unknown.stderr.strip().splitlines()) == 1


def test_statements_after_a_rotation_verify_with_the_new_key_only(cli, tmp_path, story):
    cli.json("key", "rotate", user=ADMIN)
    cli.json("approve", "m", "2", "--for", "live", user=SECOND_APPROVER)
    cli.json("promote", "m", "2", "--to", "live", user=APPROVER)
    document, envelope = _fetch(cli, tmp_path, "rotated")
    new_key = tmp_path / "new.pub.pem"
    assert cli("key", "public", "-o", str(new_key)).exit_code == 0
    assert _verify(cli, document, envelope, new_key)["verified"] is True
    assert _verify(cli, document, envelope, story, expect=1)["reason"] == "wrong-key"


@pytest.mark.parametrize("arguments, fragment", [
    (("nobody", "--stage", "live"), "unknown model"),
    (("m", "--stage", "attic"), "no stage"),
    (("m", "--stage", "canary"), "holds"),
])
def test_release_show_says_precisely_why_there_is_no_statement(cli, story, arguments, fragment):
    result = cli("release", "show", *arguments)
    assert result.exit_code == 2 and fragment in result.stderr
    assert len(result.stderr.strip().splitlines()) == 1
