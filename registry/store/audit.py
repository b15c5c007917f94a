"""The audit chain: how an event is hashed, and how a chain of stored events is checked.

Each event's hash is SHA-256 over the canonical JSON of its content and its predecessor's hash,
so editing, removing or reordering any stored event breaks every later link. An event that
closes a transaction also carries the digests of every deciding row the transaction wrote
(registry/store/row_digests.py), hashed with it; events without rows hash as they always did.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass
from typing import Any

from registry.canonical_json import digest_of

GENESIS_HASH = "0" * 64


@dataclass(frozen=True)
class AuditRecord:
    sequence: int
    occurred_at: str
    actor: str
    action: str
    subject: str
    details: dict[str, Any]
    previous_hash: str
    hash: str
    rows: list[dict[str, Any]] | None = None


def event_hash(sequence: int, occurred_at: str, actor: str, action: str, subject: str,
               details: dict[str, Any], previous_hash: str,
               rows: list[dict[str, Any]] | None = None) -> str:
    content = {
        "sequence": sequence, "occurred_at": occurred_at, "actor": actor, "action": action,
        "subject": subject, "details": details, "previous_hash": previous_hash,
    }
    if rows is not None:
        content["rows"] = rows
    return digest_of(content)


@dataclass(frozen=True)
class ChainBreak:
    sequence: int
    problem: str


def verify_chain(records: Iterable[AuditRecord],
                 head: tuple[int | None, str | None] | None) -> list[ChainBreak]:
    """Recompute every link; return the breaks in order (the first one is what to look at).
    `head` is where the chain claims to end; a claim with a missing part never matches, so an
    export whose manifest lacks it reports a break."""
    breaks: list[ChainBreak] = []
    expected_previous = GENESIS_HASH
    expected_sequence = 1
    last: AuditRecord | None = None
    for record in records:
        if record.sequence != expected_sequence:
            breaks.append(ChainBreak(record.sequence,
                                     f"expected event {expected_sequence}, found "
                                     f"{record.sequence}: an event is missing"))
        if record.previous_hash != expected_previous:
            breaks.append(ChainBreak(record.sequence,
                                     "its previous-hash does not match the event before it"))
        recomputed = event_hash(record.sequence, record.occurred_at, record.actor,
                                record.action, record.subject, record.details,
                                record.previous_hash, record.rows)
        if recomputed != record.hash:
            breaks.append(ChainBreak(record.sequence,
                                     "its content does not match its hash: the event was edited"))
        expected_previous = record.hash
        expected_sequence = record.sequence + 1
        last = record
    if head is not None:
        head_sequence, head_hash = head
        last_sequence = last.sequence if last else 0
        last_hash = last.hash if last else GENESIS_HASH
        if (head_sequence, head_hash) != (last_sequence, last_hash):
            breaks.append(ChainBreak(head_sequence if head_sequence is not None else last_sequence,
                                     f"the chain head names event {head_sequence} but the "
                                     f"newest stored event is {last_sequence}: events were "
                                     "removed or added behind the log's back"))
    return breaks
