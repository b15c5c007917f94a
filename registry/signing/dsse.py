"""DSSE envelopes: the pre-authentication encoding (PAE) and the envelope's JSON form.

Pure: the signer and the signature check are passed in, so this module knows no key store.
Source: the DSSE protocol (github.com/secure-systems-lab/dsse, protocol.md and envelope.md):

    PAE(type, body) = "DSSEv1" SP LEN(type) SP type SP LEN(body) SP body
    LEN(s) = ASCII decimal byte length of s, no leading zeros

    {"payload": base64(body), "payloadType": type, "signatures": [{"keyid": ..., "sig": base64}]}

The signature is over PAE(payloadType, payload bytes), never over the base64 text.
"""

from __future__ import annotations

import base64
import binascii
import json
from collections.abc import Callable
from dataclasses import dataclass

PAE_PREFIX = b"DSSEv1"


class MalformedEnvelope(ValueError):
    """The bytes are not a DSSE envelope; the message says which part is wrong."""


def pae(payload_type: str, payload: bytes) -> bytes:
    """The pre-authentication encoding of a payload and its type."""
    encoded_type = payload_type.encode("utf-8")
    return b" ".join([PAE_PREFIX, str(len(encoded_type)).encode("ascii"), encoded_type,
                      str(len(payload)).encode("ascii"), payload])


@dataclass(frozen=True)
class Signature:
    key_id: str
    signature: bytes


@dataclass(frozen=True)
class Envelope:
    payload_type: str
    payload: bytes
    signatures: tuple[Signature, ...]

    def to_dict(self) -> dict:
        return {"payload": base64.b64encode(self.payload).decode("ascii"),
                "payloadType": self.payload_type,
                "signatures": [{"keyid": s.key_id,
                                "sig": base64.b64encode(s.signature).decode("ascii")}
                               for s in self.signatures]}

    def to_json(self) -> bytes:
        """The envelope as stored and served: sorted keys, so the same envelope is the same
        bytes (and the same ETag) everywhere."""
        return json.dumps(self.to_dict(), sort_keys=True, separators=(",", ":")).encode("ascii")


def sign(payload_type: str, payload: bytes, key_id: str,
         sign_message: Callable[[bytes], bytes]) -> Envelope:
    """An envelope with one signature made by `sign_message` over the PAE."""
    return Envelope(payload_type, payload,
                    (Signature(key_id, sign_message(pae(payload_type, payload))),))


def unsigned(payload_type: str, payload: bytes) -> Envelope:
    """An envelope with no signature: what a catalogue without a signing key records."""
    return Envelope(payload_type, payload, ())


def _base64(text: object, what: str) -> bytes:
    # DSSE envelope.md: decoders accept both standard and URL-safe base64, padded or not.
    if not isinstance(text, str):
        raise MalformedEnvelope(f"{what} must be a base64 string")
    cleaned = text.strip().replace("-", "+").replace("_", "/")
    cleaned += "=" * (-len(cleaned) % 4)
    try:
        return base64.b64decode(cleaned.encode("ascii"), validate=True)
    except (binascii.Error, UnicodeEncodeError):
        raise MalformedEnvelope(f"{what} is not valid base64") from None


def parse(data: bytes) -> Envelope:
    """Read an envelope's JSON; every shape error is a MalformedEnvelope naming the field."""
    try:
        document = json.loads(data)
    except (UnicodeDecodeError, json.JSONDecodeError) as error:
        raise MalformedEnvelope(f"not JSON ({error})") from None
    if not isinstance(document, dict):
        raise MalformedEnvelope("an envelope is a JSON object")
    for field in ("payload", "payloadType", "signatures"):
        if field not in document:
            raise MalformedEnvelope(f"the envelope has no {field!r}")
    payload_type = document["payloadType"]
    if not isinstance(payload_type, str) or not payload_type:
        raise MalformedEnvelope("payloadType must be a non-empty string")
    raw_signatures = document["signatures"]
    if not isinstance(raw_signatures, list):
        raise MalformedEnvelope("signatures must be a list")
    signatures = []
    for index, entry in enumerate(raw_signatures):
        if not isinstance(entry, dict) or "sig" not in entry:
            raise MalformedEnvelope(f"signatures[{index}] must be an object with 'sig'")
        key_id = entry.get("keyid", "")
        if not isinstance(key_id, str):
            raise MalformedEnvelope(f"signatures[{index}].keyid must be a string")
        signatures.append(Signature(key_id, _base64(entry["sig"], f"signatures[{index}].sig")))
    return Envelope(payload_type, _base64(document["payload"], "payload"), tuple(signatures))


def is_signed_by(envelope: Envelope, key_id: str,
                     check: Callable[[bytes, bytes], bool]) -> bool:
    """True when a signature by `key_id` (or one without a key id) checks out over the PAE.

    `check(signature, message)` is the bare signature check of one public key."""
    message = pae(envelope.payload_type, envelope.payload)
    for signature in envelope.signatures:
        if signature.key_id not in (key_id, ""):
            continue
        if check(signature.signature, message):
            return True
    return False
