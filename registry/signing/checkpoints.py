"""Signed checkpoints of the audit chain: the catalogue's signature over (event count, head
hash, time), so a history cut short or rewritten no longer extends a checkpoint kept elsewhere.

The idea is Certificate Transparency's signed tree head (RFC 6962, section 3.5); the form is our
own and simpler: the signed message is a fixed label and the canonical JSON of the four fields.
"""

from __future__ import annotations

import binascii
from dataclasses import dataclass
from typing import Any

from registry.canonical_json import canonical_json
from registry.errors import UserError
from registry.signing.keys import ALGORITHM, SigningKey, key_id_of, load_public_key, verify

# The label keeps a checkpoint signature from ever being mistaken for another signed thing.
MESSAGE_LABEL = b"lockkeeper checkpoint v1\n"
FORMAT = "lockkeeper-checkpoint/1"


@dataclass(frozen=True)
class SignedCheckpoint:
    sequence: int      # events in the chain, which is also the newest event's number
    head_hash: str     # hash of that event
    signed_at: str     # ISO 8601 UTC, signed as written
    key_id: str
    signature: str     # hex of the 64-byte Ed25519 signature

    def message(self) -> bytes:
        return checkpoint_message(self.sequence, self.head_hash, self.signed_at, self.key_id)

    def describe(self) -> str:
        return f"checkpoint of event {self.sequence} signed {self.signed_at}"


def checkpoint_message(sequence: int, head_hash: str, signed_at: str, key_id: str) -> bytes:
    return MESSAGE_LABEL + canonical_json({"sequence": sequence, "head_hash": head_hash,
                                           "signed_at": signed_at, "key_id": key_id})


def sign_checkpoint(key: SigningKey, sequence: int, head_hash: str,
                    signed_at: str) -> SignedCheckpoint:
    signature = key.sign(checkpoint_message(sequence, head_hash, signed_at, key.key_id))
    return SignedCheckpoint(sequence, head_hash, signed_at, key.key_id, signature.hex())


def is_signed_by(checkpoint: SignedCheckpoint, public_key_pem: str) -> bool:
    try:
        signature = binascii.unhexlify(checkpoint.signature)
    except (binascii.Error, ValueError):
        return False
    return verify(public_key_pem, signature, checkpoint.message())


def to_document(checkpoint: SignedCheckpoint, public_key_pem: str) -> dict[str, Any]:
    """The form operators keep elsewhere; it carries its public key, so checking it needs
    nothing from the catalogue that might have been rewritten."""
    return {"format": FORMAT, "sequence": checkpoint.sequence,
            "head_hash": checkpoint.head_hash, "signed_at": checkpoint.signed_at,
            "key_id": checkpoint.key_id, "algorithm": ALGORITHM,
            "signature": checkpoint.signature, "public_key": public_key_pem}


def from_document(document: Any, *, place: str) -> tuple[SignedCheckpoint, str]:
    """A checkpoint document read back, checked in shape and signature; with its public key."""
    if not isinstance(document, dict) or document.get("format") != FORMAT:
        raise UserError(f"not a {FORMAT} document", place=place)
    fields = {"sequence": int, "head_hash": str, "signed_at": str, "key_id": str,
              "signature": str, "public_key": str}
    for name, kind in fields.items():
        value = document.get(name)
        if not isinstance(value, kind) or isinstance(value, bool):
            raise UserError(f"its {name} is missing or not a {kind.__name__}", place=place)
    if document["sequence"] < 0 or len(document["head_hash"]) != 64:
        raise UserError("its sequence or head hash is malformed", place=place)
    public_key_pem = document["public_key"]
    public_key = load_public_key(public_key_pem, place=place)
    if key_id_of(public_key) != document["key_id"]:
        raise UserError("its key id is not the id of its public key", place=place)
    checkpoint = SignedCheckpoint(document["sequence"], document["head_hash"],
                                  document["signed_at"], document["key_id"],
                                  document["signature"])
    if not is_signed_by(checkpoint, public_key_pem):
        raise UserError("its signature does not verify: it was changed after signing",
                        place=place)
    return checkpoint, public_key_pem
