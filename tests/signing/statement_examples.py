"""A release statement and a key to sign it with, shared by the signing tests."""

from __future__ import annotations

from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey

from registry.signing import dsse
from registry.signing.keys import key_id_of
from registry.signing.statements import (PAYLOAD_TYPE, Approval, GateStatus, ReleaseStatement,
                                         WaiverRecord)

# RFC 8032 section 7.1, TEST 1: the secret key and its public key.
RFC8032_SECRET = bytes.fromhex(
    "9d61b19deffd5a60ba844af492ec2cc44449c5697b326919703bac031cae7f60")
RFC8032_PUBLIC = bytes.fromhex(
    "d75a980182b10ab7d54bfed3c964073a0ee172f3daa62325af021a68f707511a")

STATEMENT = ReleaseStatement(
    model="main-burst-risk", version=2, stage="live", move="entered", reason="promotion",
    document_sha256="3f" * 32, issued_at="2026-12-04T12:00:00Z", previous_holder=1,
    holder_after=2, gate_report_digest="a1" * 32,
    gates=(GateStatus("feed-readable", "passed"), GateStatus("slice-guard", "waived")),
    approvals=(Approval("priya.raman", "accepted the Saltmarsh waiver"),),
    waivers=(WaiverRecord("slice-guard", "tomas.lindqvist", "Saltmarsh records re-keyed"),),
    signing_key_id=None, audit_event_sequence=41, audit_event_hash="b2" * 32)


def rfc8032_key() -> Ed25519PrivateKey:
    return Ed25519PrivateKey.from_private_bytes(RFC8032_SECRET)


def signed(statement: ReleaseStatement = STATEMENT,
           key: Ed25519PrivateKey | None = None) -> tuple[dsse.Envelope, Ed25519PrivateKey]:
    key = key or rfc8032_key()
    return dsse.sign(PAYLOAD_TYPE, statement.to_payload(), key_id_of(key.public_key()),
                     key.sign), key
