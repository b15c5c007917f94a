"""docs/release-statements.md: its test vectors hold, and its JavaScript recipe (run by Node,
an independent implementation of Ed25519, SHA-256 and base64) agrees with `release verify`."""

from __future__ import annotations

import dataclasses
import hashlib
import json
import re
import shutil
import subprocess
from pathlib import Path

import pytest

from registry.signing import dsse
from registry.signing.keys import key_id_of, public_key_pem
from registry.signing.release_check import check_release
from registry.signing.statements import PAYLOAD_TYPE, parse_statement

from tests.signing.statement_examples import STATEMENT, rfc8032_key

DOC = (Path(__file__).resolve().parents[2] / "docs" / "release-statements.md").read_text()
DOCUMENT = b'{"input":"double","output":"double","action":[{"+":["input",1]}]}\n'


def _vector(label: str) -> str:
    """The first 64- or 128-digit hex string after `label` in the document."""
    after = DOC[DOC.index(label):]
    return re.search(r"`([0-9a-f]{64}(?:[0-9a-f]{64})?)`", after).group(1)


def _documented_statement():
    key = rfc8032_key()
    key_id = key_id_of(key.public_key())
    return dataclasses.replace(STATEMENT, document_sha256=hashlib.sha256(DOCUMENT).hexdigest(),
                               signing_key_id=key_id), key, key_id


def test_the_documented_vectors_are_what_the_code_makes():
    statement, key, key_id = _documented_statement()
    assert key_id == _vector("Its key id")
    assert all(line in DOC for line in public_key_pem(key.public_key()).splitlines())
    assert hashlib.sha256(DOCUMENT).hexdigest() == _vector("Document:")
    payload = statement.to_payload()
    assert f"canonical JSON; {len(payload)} bytes" in DOC
    pae = dsse.pae(PAYLOAD_TYPE, payload)
    assert f"{len(pae)} bytes" in DOC
    assert hashlib.sha256(pae).hexdigest() == _vector("- PAE:")
    assert key.sign(pae).hex() == _vector("- Signature")
    example = DOC[DOC.index("```json") + 7:DOC.index("```", DOC.index("```json") + 7)]
    assert json.loads(example) == json.loads(payload)
    assert parse_statement(payload) == statement


@pytest.fixture
def files(tmp_path):
    statement, key, key_id = _documented_statement()
    envelope = dsse.sign(PAYLOAD_TYPE, statement.to_payload(), key_id, key.sign)
    (tmp_path / "model.pfa.json").write_bytes(DOCUMENT)
    (tmp_path / "release.json").write_bytes(envelope.to_json())
    (tmp_path / "catalogue.pub.pem").write_text(public_key_pem(key.public_key()))
    start = DOC.index("```js\n") + 6
    recipe = DOC[start:DOC.index("```", start)]
    (tmp_path / "verify-release.mjs").write_text(recipe)
    return tmp_path, envelope, key


@pytest.mark.skipif(shutil.which("node") is None, reason="needs Node to run the recipe")
@pytest.mark.parametrize("change, reason", [
    (None, None), ("document", "document-changed"), ("stage", "other-stage"),
    ("key", "wrong-key"), ("left", "left-stage")])
def test_the_javascript_recipe_agrees_with_release_verify(files, change, reason):
    from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey

    folder, envelope, key = files
    stage, public = "live", key.public_key()
    if change == "document":
        data = bytearray(DOCUMENT)
        data[7] ^= 0x01
        (folder / "model.pfa.json").write_bytes(bytes(data))
    elif change == "stage":
        stage = "canary"
    elif change == "key":
        public = Ed25519PrivateKey.generate().public_key()
        (folder / "catalogue.pub.pem").write_text(public_key_pem(public))
    elif change == "left":
        statement, _, key_id = _documented_statement()
        left = dataclasses.replace(statement, move="left", reason="rollback")
        envelope = dsse.sign(PAYLOAD_TYPE, left.to_payload(), key_id, key.sign)
        (folder / "release.json").write_bytes(envelope.to_json())
    run = subprocess.run(["node", str(folder / "verify-release.mjs"),
                          str(folder / "model.pfa.json"), str(folder / "release.json"),
                          str(folder / "catalogue.pub.pem"), "main-burst-risk", stage],
                         capture_output=True, text=True, timeout=60)
    ours = check_release(hashlib.sha256((folder / "model.pfa.json").read_bytes()).hexdigest(),
                         envelope, public, model="main-burst-risk", stage=stage)
    assert ours.reason == reason
    assert run.returncode == (0 if reason is None else 1), run.stderr
    if reason is not None:
        assert run.stderr.strip() == f"refused: {reason}"
