"""Use cases of the signing key: create it, rotate it, list the public keys the catalogue has had.

The private key lives in the key file; the catalogue keeps each public half, audited. The file is
written before the transaction: if the transaction then fails, the next `key create` or
`key rotate` adopts the key already in the file instead of making another.
"""

from __future__ import annotations

import os
from pathlib import Path
from typing import Any

from registry.errors import UserError
from registry.service.actors import Actor
from registry.service.authorisation import authorise
from registry.signing.keys import (
    ALGORITHM,
    SigningKey,
    create_signing_key_file,
    load_signing_key,
)
from registry.store import tables as t
from registry.store.catalogue import Catalogue
from registry.store.unit_of_work import UnitOfWork, utc_now
from registry.timestamps import utc_iso


def key_document(row: t.SigningKeyRow) -> dict[str, Any]:
    return {"id": row.key_id, "algorithm": row.algorithm, "public_key": row.public_key_pem,
            "created_at": utc_iso(row.created_at), "retired_at": utc_iso(row.retired_at)}


def list_keys(catalogue: Catalogue) -> dict[str, Any]:
    with UnitOfWork(catalogue, write=False) as uow:
        return {"keys": [key_document(row) for row in uow.keys.all()]}


def _key_file(catalogue: Catalogue) -> Path:
    if catalogue.key_file is None:
        raise UserError("this catalogue has no key file location", place="key")
    return catalogue.key_file


def create_key(catalogue: Catalogue, actor: Actor) -> dict[str, Any]:
    """Make the key file (or adopt the key already in it) and record its public half."""
    path = _key_file(catalogue)
    with UnitOfWork(catalogue) as uow:
        authorise(uow, actor, "key.create")
        current = uow.keys.current()
        in_file = load_signing_key(path)
        if current is not None:
            if in_file is not None and in_file.key_id == current.key_id:
                raise UserError(f"the catalogue already has its signing key {current.key_id} in "
                                f"{path}; use `key rotate` for a new one", place="key")
            raise UserError(f"the catalogue already has the signing key {current.key_id}, not in "
                            f"{path}; point {_env_name()} at its file, or `key rotate`",
                            place="key")
        if in_file is not None and uow.keys.get(in_file.key_id) is not None:
            raise UserError(f"the key in {path} was retired from this catalogue; use "
                            "`key rotate` for a new one", place="key")
        key = in_file or create_signing_key_file(path)
        row = _record(uow, key, actor, "key.create", retired=None, file=path)
        catalogue.signing_key = key  # so this very transaction signs its first checkpoint
        uow.commit()
    return {**key_document(row), "file": str(path), "created_file": in_file is None}


def rotate_key(catalogue: Catalogue, actor: Actor) -> dict[str, Any]:
    """Retire the current key and make a new one current; the old private key is kept beside
    the new one (renamed), for the operator to destroy once nothing needs it."""
    path = _key_file(catalogue)
    with UnitOfWork(catalogue) as uow:
        authorise(uow, actor, "key.rotate")
        current = uow.keys.current()
        in_file = load_signing_key(path)
        if in_file is not None and uow.keys.get(in_file.key_id) is None:
            key = in_file  # a rotation whose transaction failed after writing the file
        else:
            key = _replace_key_file(path, in_file)
        retired = current.key_id if current is not None else None
        if retired is not None:
            uow.keys.retire(retired, utc_now())
        row = _record(uow, key, actor, "key.rotate", retired=retired, file=path)
        catalogue.signing_key = key
        uow.commit()
    return {**key_document(row), "file": str(path), "retired": retired}


def _replace_key_file(path: Path, old: SigningKey | None) -> SigningKey:
    fresh = path.with_name(path.name + ".new")
    if fresh.exists():
        fresh.unlink()  # left by a rotation interrupted before its rename
    key = create_signing_key_file(fresh)
    if old is not None:
        os.replace(path, path.with_name(f"{path.name}.retired-{old.key_id[:16]}"))
    os.replace(fresh, path)
    return key


def _record(uow: UnitOfWork, key: SigningKey, actor: Actor, action: str, *,
            retired: str | None, file: Path) -> t.SigningKeyRow:
    row = uow.keys.add(key.key_id, key.public_key_pem(), utc_now(), algorithm=ALGORITHM)
    details: dict[str, Any] = {"key_id": key.key_id, "algorithm": ALGORITHM,
                               "public_key": key.public_key_pem()}
    if retired is not None:
        details["retired"] = retired
    uow.audit.append(actor.name, action, f"key/{key.key_id}", details)
    return row


def _env_name() -> str:
    from registry.signing.keys import SIGNING_KEY_ENV

    return SIGNING_KEY_ENV
