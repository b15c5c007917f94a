"""DSSE envelopes against the protocol's worked example, RFC 8032, and an independent verifier
(securesystemslib's DSSE support)."""

from __future__ import annotations

import base64
import copy
import json

import pytest
from cryptography.hazmat.primitives import serialization
from securesystemslib.dsse import Envelope as ReferenceEnvelope
from securesystemslib.exceptions import VerificationError
from securesystemslib.signer import CryptoSigner, SSlibKey

from registry.signing import dsse
from registry.signing.keys import key_id_of

from tests.signing.statement_examples import (RFC8032_PUBLIC, STATEMENT, rfc8032_key, signed)


def test_pae_matches_the_dsse_protocols_worked_example():
    # DSSE protocol.md, "Test Vectors"/hello world: payloadType http://example.com/HelloWorld,
    # payload "hello world", PAE "DSSEv1 29 http://example.com/HelloWorld 11 hello world".
    assert dsse.pae("http://example.com/HelloWorld", b"hello world") == \
        b"DSSEv1 29 http://example.com/HelloWorld 11 hello world"


def test_pae_counts_bytes_not_characters_and_keeps_an_empty_body():
    assert dsse.pae("t\u00e9", "\u00e9".encode()) == "DSSEv1 3 t\u00e9 2 \u00e9".encode()
    assert dsse.pae("a", b"") == b"DSSEv1 1 a 0 "


def test_pae_agrees_with_securesystemslib():
    for payload_type, payload in (("application/vnd.in-toto+json", b'{"a":1}'),
                                  ("x", b""), ("http://example.com/HelloWorld", b"hello world")):
        reference = ReferenceEnvelope(payload, payload_type, {})
        assert dsse.pae(payload_type, payload) == reference.pae()


def test_the_rfc_8032_key_gives_the_rfc_public_key_and_signature():
    # RFC 8032 section 7.1, TEST 1: empty message.
    key = rfc8032_key()
    public = key.public_key().public_bytes(serialization.Encoding.Raw,
                                           serialization.PublicFormat.Raw)
    assert public == RFC8032_PUBLIC
    assert key.sign(b"").hex() == (
        "e5564300c360ac729086e2cc806e828a84877f1eb8e5d974d873e065224901555fb8821590a33bac"
        "c61e39701cf9b46bd25bf5f0595bbe24655141438e7a100b")


def _reference_key(private_key) -> SSlibKey:
    public = private_key.public_key()
    return SSlibKey.from_crypto(public, keyid=key_id_of(public))


def test_securesystemslib_accepts_our_envelope():
    envelope, key = signed()
    reference = ReferenceEnvelope.from_dict(json.loads(envelope.to_json()))
    accepted = reference.verify([_reference_key(key)], 1)
    assert list(accepted) == [key_id_of(key.public_key())]
    assert reference.payload == STATEMENT.to_payload()


@pytest.mark.parametrize("alter", ["payload", "type", "signature"])
def test_securesystemslib_and_we_both_reject_an_altered_envelope(alter):
    envelope, key = signed()
    document = json.loads(envelope.to_json())
    if alter == "payload":
        payload = bytearray(base64.b64decode(document["payload"]))
        payload[10] ^= 0x01
        document["payload"] = base64.b64encode(bytes(payload)).decode()
    elif alter == "type":
        document["payloadType"] = "application/json"
    else:
        signature = bytearray(base64.b64decode(document["signatures"][0]["sig"]))
        signature[0] ^= 0x01
        document["signatures"][0]["sig"] = base64.b64encode(bytes(signature)).decode()
    with pytest.raises(VerificationError):
        # from_dict takes the signatures out of the dict it is given: hand it a copy.
        ReferenceEnvelope.from_dict(copy.deepcopy(document)).verify([_reference_key(key)], 1)
    ours = dsse.parse(json.dumps(document).encode())
    key_id = key_id_of(key.public_key())
    assert not dsse.is_signed_by(ours, key_id, _bare_check(key))


def _bare_check(key):
    from cryptography.exceptions import InvalidSignature

    def check(signature: bytes, message: bytes) -> bool:
        try:
            key.public_key().verify(signature, message)
        except InvalidSignature:
            return False
        return True

    return check


def test_we_accept_an_envelope_securesystemslib_signed():
    key = rfc8032_key()
    reference = ReferenceEnvelope(STATEMENT.to_payload(), "application/vnd.in-toto+json", {})
    signer = CryptoSigner(key, _reference_key(key))
    reference.sign(signer)
    ours = dsse.parse(json.dumps(reference.to_dict()).encode())
    assert dsse.is_signed_by(ours, key_id_of(key.public_key()), _bare_check(key))


@pytest.mark.parametrize("data, fragment", [
    (b"not json", "not JSON"),
    (b"[]", "JSON object"),
    (b'{"payloadType": "x", "signatures": []}', "'payload'"),
    (b'{"payload": "!!", "payloadType": "x", "signatures": []}', "base64"),
    (b'{"payload": "", "payloadType": "", "signatures": []}', "payloadType"),
    (b'{"payload": "", "payloadType": "x", "signatures": {}}', "list"),
    (b'{"payload": "", "payloadType": "x", "signatures": [{"keyid": 1, "sig": ""}]}',
     "keyid"),
])
def test_a_malformed_envelope_names_what_is_wrong(data, fragment):
    with pytest.raises(dsse.MalformedEnvelope, match=fragment):
        dsse.parse(data)


def test_url_safe_and_unpadded_base64_are_read_as_the_protocol_allows():
    envelope, _ = signed()
    document = json.loads(envelope.to_json())
    document["payload"] = base64.urlsafe_b64encode(envelope.payload).decode().rstrip("=")
    assert dsse.parse(json.dumps(document).encode()).payload == envelope.payload
