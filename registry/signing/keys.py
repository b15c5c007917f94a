"""The catalogue's Ed25519 signing key: its file, its id, and the bare signature check."""

from __future__ import annotations

import hashlib
import os
from dataclasses import dataclass
from pathlib import Path

from cryptography.exceptions import InvalidSignature
from cryptography.hazmat.primitives import serialization
from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey, Ed25519PublicKey

from registry.errors import UserError

SIGNING_KEY_ENV = "LOCKKEEPER_SIGNING_KEY"


def default_key_path(db_url: str | None) -> Path:
    from registry.store.catalogue import parse_catalogue_url

    url = parse_catalogue_url(db_url)
    if url.get_backend_name() == "sqlite" and url.database and url.database != ":memory:":
        return Path(url.database).expanduser().parent / "signing.key"
    return Path(".lockkeeper") / "signing.key"


def key_id_of(public_key: Ed25519PublicKey) -> str:
    raw = public_key.public_bytes(serialization.Encoding.Raw, serialization.PublicFormat.Raw)
    return hashlib.sha256(raw).hexdigest()


@dataclass(frozen=True)
class SigningKey:
    key_id: str
    private_key: Ed25519PrivateKey

    def public_key_pem(self) -> str:
        return self.private_key.public_key().public_bytes(
            serialization.Encoding.PEM, serialization.PublicFormat.SubjectPublicKeyInfo
        ).decode("ascii")

    def sign(self, message: bytes) -> bytes:
        return self.private_key.sign(message)


def load_signing_key(path: str | Path) -> SigningKey | None:
    path = Path(path)
    try:
        data = path.read_bytes()
    except FileNotFoundError:
        return None
    try:
        key = serialization.load_pem_private_key(data, password=None)
    except (ValueError, TypeError):
        raise UserError("not a PEM Ed25519 private key", place=str(path)) from None
    if not isinstance(key, Ed25519PrivateKey):
        raise UserError("not an Ed25519 key", place=str(path))
    return SigningKey(key_id_of(key.public_key()), key)


def create_signing_key_file(path: str | Path) -> SigningKey:
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    key = Ed25519PrivateKey.generate()
    pem = key.private_bytes(serialization.Encoding.PEM, serialization.PrivateFormat.PKCS8,
                            serialization.NoEncryption())
    try:
        descriptor = os.open(path, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600)
    except FileExistsError:
        raise UserError("a signing key file is already there", place=str(path)) from None
    with os.fdopen(descriptor, "wb") as file:
        file.write(pem)
    return SigningKey(key_id_of(key.public_key()), key)


def verify(public_key_pem: str, signature: bytes, message: bytes) -> bool:
    key = serialization.load_pem_public_key(public_key_pem.encode("ascii"))
    try:
        key.verify(signature, message)
    except InvalidSignature:
        return False
    return True
