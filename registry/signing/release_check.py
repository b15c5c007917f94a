"""Checking a release statement on the serving side, offline: is this document the one the
catalogue released into this stage, signed by this key?

Pure apart from what the caller passes in (the document's SHA-256, the envelope's bytes, the
public key): no catalogue, no network. Each negative answer names its reason, so a serving
system can log why it refused to load a document.
"""

from __future__ import annotations

from dataclasses import dataclass

from cryptography.exceptions import InvalidSignature
from cryptography.hazmat.primitives import serialization
from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PublicKey

from registry.errors import UserError
from registry.signing import dsse
from registry.signing.keys import key_id_of
from registry.signing.statements import (
    PAYLOAD_TYPE,
    MalformedStatement,
    ReleaseStatement,
    parse_statement,
)

# Reasons a statement does not vouch for a document (exit 1), in the order they are checked.
REASONS = {
    "not-signed": "the envelope carries no signature",
    "wrong-key": "no signature in the envelope is valid for this key",
    "malformed-statement": "the signed payload is not a release statement",
    "document-changed": "the document's SHA-256 is not the statement's subject digest",
    "other-model": "the statement is about another model",
    "other-stage": "the statement is about another stage",
    "left-stage": "the statement records that the document left the stage",
    "superseded": "the statement is no longer the current one for its stage",
}


@dataclass(frozen=True)
class Verdict:
    verified: bool
    reason: str | None
    message: str
    key_id: str
    document_sha256: str
    statement: ReleaseStatement | None = None

    def to_dict(self) -> dict:
        statement = self.statement
        return {"verified": self.verified, "reason": self.reason, "message": self.message,
                "key_id": self.key_id, "document_sha256": self.document_sha256,
                "model": statement.model if statement else None,
                "version": statement.version if statement else None,
                "stage": statement.stage if statement else None,
                "move": statement.move if statement else None,
                "subject_sha256": statement.document_sha256 if statement else None,
                "issued_at": statement.issued_at if statement else None}


def load_public_key(pem: bytes, place: str) -> Ed25519PublicKey:
    """A PEM public key (SubjectPublicKeyInfo), or a one-line UserError naming the file."""
    try:
        key = serialization.load_pem_public_key(pem)
    except (ValueError, TypeError):
        raise UserError("not a PEM public key (expected -----BEGIN PUBLIC KEY-----)",
                        place=place) from None
    if not isinstance(key, Ed25519PublicKey):
        raise UserError("not an Ed25519 public key", place=place)
    return key


def read_envelope(data: bytes, place: str) -> dsse.Envelope:
    """The envelope, or a one-line UserError: an unreadable envelope is bad input (exit 2)."""
    try:
        envelope = dsse.parse(data)
    except dsse.MalformedEnvelope as error:
        raise UserError(f"not a DSSE envelope: {error}", place=place) from None
    return envelope


def _refuse(reason: str, key_id: str, document_sha256: str,
            statement: ReleaseStatement | None = None, detail: str = "") -> Verdict:
    message = REASONS[reason] + (f" ({detail})" if detail else "")
    return Verdict(False, reason, message, key_id, document_sha256, statement)


def check_release(document_sha256: str, envelope: dsse.Envelope, public_key: Ed25519PublicKey,
                  *, model: str | None = None, stage: str | None = None) -> Verdict:
    """Does `envelope`, signed by `public_key`, say that the document with this SHA-256 entered
    the stage (of the model) it names? The signature is checked before the payload is read."""
    key_id = key_id_of(public_key)
    if not envelope.signatures:
        return _refuse("not-signed", key_id, document_sha256)

    def check(signature: bytes, message: bytes) -> bool:
        try:
            public_key.verify(signature, message)
        except InvalidSignature:
            return False
        return True

    if not dsse.is_signed_by(envelope, key_id, check):
        return _refuse("wrong-key", key_id, document_sha256)
    if envelope.payload_type != PAYLOAD_TYPE:
        return _refuse("malformed-statement", key_id, document_sha256,
                       detail=f"payloadType is {envelope.payload_type!r}")
    try:
        statement = parse_statement(envelope.payload)
    except MalformedStatement as error:
        return _refuse("malformed-statement", key_id, document_sha256, detail=str(error))
    if statement.document_sha256 != document_sha256:
        return _refuse("document-changed", key_id, document_sha256, statement,
                       f"document {document_sha256[:12]}..., statement "
                       f"{statement.document_sha256[:12]}...")
    if model is not None and statement.model != model:
        return _refuse("other-model", key_id, document_sha256, statement,
                       f"{statement.model!r}, not {model!r}")
    if stage is not None and statement.stage != stage:
        return _refuse("other-stage", key_id, document_sha256, statement,
                       f"{statement.stage!r}, not {stage!r}")
    if statement.move != "entered":
        return _refuse("left-stage", key_id, document_sha256, statement,
                       f"{statement.subject_name} left {statement.stage!r} by "
                       f"{statement.reason}")
    return Verdict(True, None, f"{statement.subject_name} was released into "
                               f"{statement.stage!r} at {statement.issued_at}",
                   key_id, document_sha256, statement)


def superseded(verdict: Verdict) -> Verdict:
    """The same verdict, turned negative: the catalogue now names another statement."""
    return _refuse("superseded", verdict.key_id, verdict.document_sha256, verdict.statement)
