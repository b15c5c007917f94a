"""What a writing transaction does just before it commits: the event that closes it takes the
digests of every deciding row the transaction wrote, and the catalogue signs a checkpoint when
the transaction changed a stage, a key or a recall, or crossed a multiple of CHECKPOINT_EVERY
events. A catalogue without a current signing key signs nothing."""

from __future__ import annotations

from datetime import UTC, datetime
from typing import TYPE_CHECKING

from registry.signing.checkpoints import SignedCheckpoint, sign_checkpoint
from registry.store import tables as t
from registry.store.row_capture import UncoveredWrite

if TYPE_CHECKING:
    from registry.store.unit_of_work import UnitOfWork

CHECKPOINT_EVERY = 100
# Writing any of these tables, or taking one of these actions, is worth a checkpoint at once.
CHECKPOINT_TABLES = frozenset({t.StageHolding.__tablename__, t.StageEvent.__tablename__,
                               t.SigningKeyRow.__tablename__})
CHECKPOINT_ACTIONS = frozenset({"dataset.recall", "catalogue.convert"})


def seal_transaction(uow: UnitOfWork) -> None:
    uow.session.flush()
    capture = uow.capture
    rows = capture.sealed_rows() if capture is not None else []
    events = uow.audit.appended
    if rows:
        if not events:
            raise UncoveredWrite("a transaction wrote deciding rows ("
                                 + ", ".join(sorted({r["table"] for r in rows}))
                                 + ") without an audit event")
        uow.audit.attach_rows(rows)
    if events and _deserves_checkpoint(uow, capture.tables if capture else set()):
        sign_head(uow)


def _deserves_checkpoint(uow: UnitOfWork, tables: set[str]) -> bool:
    events = uow.audit.appended
    if tables & CHECKPOINT_TABLES or any(e.action in CHECKPOINT_ACTIONS for e in events):
        return True
    before = events[0].sequence - 1
    return events[-1].sequence // CHECKPOINT_EVERY > before // CHECKPOINT_EVERY


def sign_head(uow: UnitOfWork) -> SignedCheckpoint | None:
    """Sign the chain's head with the catalogue's key, if it has one and it is the current key."""
    key = uow.catalogue.signing_key
    if key is None:
        return None
    current = uow.keys.current()
    if current is None or current.key_id != key.key_id:
        return None
    head = uow.session.get(t.AuditHead, 1)
    if head is None or head.sequence == 0:
        return None
    signed_at = datetime.now(UTC).isoformat(timespec="microseconds")
    checkpoint = sign_checkpoint(key, head.sequence, head.hash, signed_at)
    uow.checkpoints.add(checkpoint)
    return checkpoint
