"""Signing keys: where the private key file lives, how it is made and read, and how a signature
is checked against a public key. Pure and file IO only; no database."""

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
ALGORITHM = "ed25519"
KEY_FILE_NAME = "signing.key"
DEFAULT_FOLDER = Path(".lockkeeper")
KEY_FILE_MODE = 0o600
MAX_KEY_FILE_BYTES = 16_384  # a PEM Ed25519 key is about 120 bytes


@dataclass(frozen=True)
class SigningKey:
    key_id: str
    private_key: Ed25519PrivateKey

    def public_key_pem(self) -> str:
        return public_key_pem(self.private_key.public_key())

    def sign(self, message: bytes) -> bytes:
        return self.private_key.sign(message)


def public_key_pem(public_key: Ed25519PublicKey) -> str:
    return public_key.public_bytes(serialization.Encoding.PEM,
                                   serialization.PublicFormat.SubjectPublicKeyInfo).decode("ascii")


def key_id_of(public_key: Ed25519PublicKey) -> str:
    """The key's name everywhere: lowercase hex SHA-256 of its raw 32-byte public key."""
    raw = public_key.public_bytes(serialization.Encoding.Raw, serialization.PublicFormat.Raw)
    return hashlib.sha256(raw).hexdigest()


def default_key_path(db_url: str | None) -> Path:
    """Where the key of a catalogue lives when LOCKKEEPER_SIGNING_KEY does not say: beside the
    SQLite file of a SQLite catalogue, else in ./.lockkeeper/."""
    from sqlalchemy.engine import make_url
    from sqlalchemy.exc import ArgumentError

    text = db_url or os.environ.get("LOCKKEEPER_DB") or "sqlite:///.lockkeeper/catalogue.db"
    try:
        url = make_url(text)
    except ArgumentError:
        return DEFAULT_FOLDER / KEY_FILE_NAME
    database = url.database or ""
    if (url.get_backend_name() == "sqlite" and database and database != ":memory:"
            and not database.startswith("file:")):
        return Path(database).expanduser().parent / KEY_FILE_NAME
    return DEFAULT_FOLDER / KEY_FILE_NAME


def key_path(db_url: str | None) -> Path:
    """The key file of a catalogue: LOCKKEEPER_SIGNING_KEY when set, else the default place."""
    named = os.environ.get(SIGNING_KEY_ENV)
    return Path(named).expanduser() if named else default_key_path(db_url)


def load_signing_key(path: Path | str) -> SigningKey | None:
    """The key in a PKCS#8 PEM file; None when there is no such file."""
    path = Path(path)
    try:
        if path.stat().st_size > MAX_KEY_FILE_BYTES:
            raise UserError(f"{path} is too large to be a signing key", place=str(path))
        content = path.read_bytes()
    except FileNotFoundError:
        return None
    except (IsADirectoryError, PermissionError, OSError) as error:
        raise UserError(f"cannot read the signing key {path}: {error}", place=str(path)) from None
    try:
        private_key = serialization.load_pem_private_key(content, password=None)
    except (ValueError, TypeError) as error:
        raise UserError(f"{path} is not an unencrypted PEM private key ({error})",
                        place=str(path)) from None
    if not isinstance(private_key, Ed25519PrivateKey):
        raise UserError(f"{path} holds a key of another kind; expected Ed25519", place=str(path))
    return SigningKey(key_id_of(private_key.public_key()), private_key)


def create_signing_key_file(path: Path | str) -> SigningKey:
    """Make a new key and write it as PKCS#8 PEM, readable by its owner only; never overwrite."""
    path = Path(path)
    private_key = Ed25519PrivateKey.generate()
    content = private_key.private_bytes(serialization.Encoding.PEM,
                                        serialization.PrivateFormat.PKCS8,
                                        serialization.NoEncryption())
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        # O_EXCL: refuse an existing file (or a link planted in its place); the mode is set at
        # creation so the key is never readable by others, even for a moment.
        descriptor = os.open(path, os.O_WRONLY | os.O_CREAT | os.O_EXCL | os.O_NOFOLLOW,
                             KEY_FILE_MODE)
    except FileExistsError:
        raise UserError(f"{path} already exists; a signing key is never overwritten (use "
                        "`key rotate` for a new one)", place=str(path)) from None
    except OSError as error:
        raise UserError(f"cannot create the signing key {path}: {error}", place=str(path)) from None
    with os.fdopen(descriptor, "wb") as out:
        out.write(content)
        out.flush()
        os.fsync(out.fileno())
    return SigningKey(key_id_of(private_key.public_key()), private_key)


def load_public_key(pem: str | bytes, *, place: str = "public key") -> Ed25519PublicKey:
    """An Ed25519 public key from PEM text, or a UserError naming where it came from."""
    data = pem.encode("ascii", "replace") if isinstance(pem, str) else pem
    try:
        public_key = serialization.load_pem_public_key(data)
    except (ValueError, TypeError) as error:
        raise UserError(f"not a PEM public key ({error})", place=place) from None
    if not isinstance(public_key, Ed25519PublicKey):
        raise UserError("the public key is not an Ed25519 key", place=place)
    return public_key


def verify(public_key_pem: str, signature: bytes, message: bytes) -> bool:
    """Whether signature is the Ed25519 signature of message under the PEM public key."""
    try:
        load_public_key(public_key_pem).verify(signature, message)
    except (InvalidSignature, UserError):
        return False
    return True
