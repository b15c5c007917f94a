"""The offline check a serving system runs: every reason a statement does not vouch for a
document, and the in-toto Statement v1 layout it relies on."""

from __future__ import annotations

import dataclasses
import json

import pytest
from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey

from registry.signing import dsse
from registry.signing.keys import key_id_of
from registry.signing.release_check import check_release
from registry.signing.statements import (PAYLOAD_TYPE, PREDICATE_TYPE, STATEMENT_TYPE,
                                         MalformedStatement, parse_statement)

from tests.signing.statement_examples import STATEMENT, rfc8032_key, signed

DOCUMENT = STATEMENT.document_sha256


def test_the_statement_has_the_in_toto_statement_v1_layout():
    # in-toto Attestation Framework, spec/v1/statement.md: _type, subject (name, digest),
    # predicateType, predicate; the DSSE payloadType is application/vnd.in-toto+json.
    document = json.loads(STATEMENT.to_payload())
    assert document["_type"] == STATEMENT_TYPE == "https://in-toto.io/Statement/v1"
    assert document["subject"] == [{"name": "main-burst-risk@2",
                                     "digest": {"sha256": DOCUMENT}}]
    assert document["predicateType"] == PREDICATE_TYPE
    assert PAYLOAD_TYPE == "application/vnd.in-toto+json"
    predicate = document["predicate"]
    assert set(predicate) == {"model", "version", "stage", "move", "reason", "issued_at",
                              "previous_holder", "holder_after", "gate_report", "approvals",
                              "waivers", "signing_key_id", "audit_event"}
    assert parse_statement(STATEMENT.to_payload()) == STATEMENT


def test_a_good_statement_verifies():
    envelope, key = signed()
    verdict = check_release(DOCUMENT, envelope, key.public_key(), model="main-burst-risk",
                            stage="live")
    assert verdict.verified and verdict.reason is None
    assert verdict.statement.version == 2


def _reason(envelope, key, document=DOCUMENT, **expect) -> str:
    verdict = check_release(document, envelope, key.public_key(), **expect)
    assert not verdict.verified
    return verdict.reason


def test_every_reason_a_statement_does_not_vouch_for_a_document():
    envelope, key = signed()
    assert _reason(envelope, key, "00" * 32) == "document-changed"
    assert _reason(envelope, key, model="night-flow-leak") == "other-model"
    assert _reason(envelope, key, stage="canary") == "other-stage"
    assert _reason(envelope, Ed25519PrivateKey.generate()) == "wrong-key"
    unsigned = dsse.unsigned(PAYLOAD_TYPE, STATEMENT.to_payload())
    assert _reason(unsigned, key) == "not-signed"
    left, _ = signed(dataclasses.replace(STATEMENT, move="left", reason="rollback"), key)
    assert _reason(left, key) == "left-stage"


def _signed_payload(payload: bytes, payload_type: str = PAYLOAD_TYPE):
    key = rfc8032_key()
    return dsse.sign(payload_type, payload, key_id_of(key.public_key()), key.sign), key


@pytest.mark.parametrize("change", [
    lambda d: d.update({"_type": "https://in-toto.io/Statement/v0.1"}),
    lambda d: d.update({"predicateType": "https://example.invalid/other"}),
    lambda d: d.update({"subject": []}),
    lambda d: d["subject"][0].update({"name": "main-burst-risk@3"}),
    lambda d: d["subject"][0]["digest"].update({"sha256": "XYZ"}),
    lambda d: d["predicate"].update({"version": "2"}),
    lambda d: d["predicate"].update({"move": "stayed"}),
    lambda d: d["predicate"].pop("audit_event"),
    lambda d: d["predicate"].update({"approvals": [{"who": 1}]}),
])
def test_a_signed_payload_that_is_not_a_release_statement_is_malformed(change):
    document = json.loads(STATEMENT.to_payload())
    change(document)
    payload = json.dumps(document).encode()
    with pytest.raises(MalformedStatement):
        parse_statement(payload)
    envelope, key = _signed_payload(payload)
    assert _reason(envelope, key) == "malformed-statement"


def test_another_payload_type_is_malformed_even_when_signed():
    envelope, key = _signed_payload(STATEMENT.to_payload(), "application/json")
    assert _reason(envelope, key) == "malformed-statement"


def test_the_signature_is_checked_before_the_payload_is_read():
    envelope, _ = _signed_payload(b"not json at all")
    assert _reason(envelope, Ed25519PrivateKey.generate()) == "wrong-key"
