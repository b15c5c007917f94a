"""`audit checkpoint`: the newest signed checkpoint of the chain, for operators to keep
elsewhere (as transparency logs publish their signed heads); signed afresh when the chain has
grown since the newest stored one."""

from __future__ import annotations

from typing import Any

from registry.errors import UserError
from registry.service.actors import Actor
from registry.service.authorisation import authorise
from registry.signing.checkpoints import to_document
from registry.store.catalogue import Catalogue
from registry.store.sealing import sign_head
from registry.store.unit_of_work import UnitOfWork


def newest_checkpoint(catalogue: Catalogue, actor: Actor) -> dict[str, Any]:
    with UnitOfWork(catalogue) as uow:
        authorise(uow, actor, "audit.checkpoint")
        current = uow.keys.current()
        key = catalogue.signing_key
        if current is None or key is None or key.key_id != current.key_id:
            raise UserError("nothing is signed: this catalogue has no signing key here "
                            "(`lockkeeper key create` makes one)", place="key")
        head = uow.audit.head()
        if head is None or head[0] == 0:
            raise UserError("the audit log is empty: there is nothing to checkpoint yet",
                            place="audit")
        newest = uow.checkpoints.newest()
        if newest is None or newest.sequence != head[0] or newest.key_id != key.key_id:
            newest = sign_head(uow)
            assert newest is not None  # current key and a non-empty log, both checked above
            uow.commit()
        return to_document(newest, current.public_key_pem)
