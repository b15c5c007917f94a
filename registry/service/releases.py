"""Release statements: written in the transaction of every move into or out of an exclusive
stage, and read back for the serving side (the current statement of a stage, the statements
of a version).

A statement is signed with the catalogue's key when the open catalogue has the key the
catalogue names as current; otherwise it is stored unsigned, which says plainly that nothing
vouches for it (a serving system's check refuses it as `not-signed`).
"""

from __future__ import annotations

import hashlib
from dataclasses import dataclass
from datetime import UTC, datetime

from registry.canonical_json import digest_of
from registry.errors import NotFound
from registry.gates import GateReport
from registry.names import check_name
from registry.node_ids import version_id
from registry.service.document_fetch import find_document
from registry.service.models import find_model, find_version
from registry.signing import dsse
from registry.signing.statements import (
    PAYLOAD_TYPE,
    Approval,
    GateStatus,
    ReleaseStatement,
    WaiverRecord,
)
from registry.store import tables as t
from registry.store.catalogue import Catalogue
from registry.store.release_repository import StoredRelease
from registry.store.unit_of_work import UnitOfWork, utc_now

ENVELOPE_MEDIA_TYPE = "application/vnd.lockkeeper.release+json"


def _signing_key(uow: UnitOfWork):
    """The key to sign with: the open catalogue's, if it is the one the catalogue names."""
    key = getattr(uow.catalogue, "signing_key", None)
    if key is None:
        return None
    current = uow.keys.current()
    return key if current is not None and current.key_id == key.key_id else None


def _iso(moment: datetime) -> str:
    if moment.tzinfo is None:  # SQLite hands back what it stored, without the zone: UTC
        moment = moment.replace(tzinfo=UTC)
    return moment.isoformat(timespec="seconds").replace("+00:00", "Z")


def moving_event(uow: UnitOfWork) -> tuple[int, str]:
    """(sequence, hash) of the audit event just appended for a move, for its statements to
    quote. Each statement then appends an event of its own, so the move's event is never the
    transaction's last one, the one rehashed at commit with the row digests: the hash quoted
    is final."""
    sequence, digest = uow.audit.last_sequence, uow.audit.last_hash
    assert sequence is not None and digest is not None  # the move's event was just appended
    return sequence, digest


def record_move(uow: UnitOfWork, actor: str, model: t.Model, version: t.Version, stage: str, *,
                move: str, reason: str, previous_holder: int | None, holder_after: int | None,
                report: GateReport | None, moved_by: tuple[int, str]) -> None:
    """Write the statement of one move, quoting `moved_by` (see moving_event), and audit it."""
    key = _signing_key(uow)
    waivers = [r.waiver for r in report.results if r.waived and r.waiver] if report else []
    statement = ReleaseStatement(
        model=model.name, version=version.number, stage=stage, move=move, reason=reason,
        document_sha256=version.stored_blob_digest, issued_at=_iso(utc_now()),
        previous_holder=previous_holder, holder_after=holder_after,
        gate_report_digest=digest_of(report.to_dict()) if report else None,
        gates=tuple(GateStatus(r.gate, r.status) for r in report.results) if report else (),
        approvals=tuple(Approval(who, note)
                        for who, note in uow.releases.approvals(version.id, stage)),
        waivers=tuple(WaiverRecord(w.gate, w.approver, w.reason) for w in waivers),
        signing_key_id=key.key_id if key else None,
        audit_event_sequence=moved_by[0], audit_event_hash=moved_by[1])
    payload = statement.to_payload()
    envelope = (dsse.sign(PAYLOAD_TYPE, payload, key.key_id, key.sign) if key
                else dsse.unsigned(PAYLOAD_TYPE, payload))
    data = envelope.to_json()
    digest = hashlib.sha256(data).hexdigest()
    uow.releases.add(model_id=model.id, version_id=version.id, stage=stage, move=move,
                     envelope_json=data.decode("ascii"), envelope_digest=digest,
                     key_id=key.key_id if key else None, audit_sequence=moved_by[0],
                     at=utc_now())
    uow.audit.append(actor, "release.record", version_id(model.name, version.number),
                     {"stage": stage, "move": move, "reason": reason,
                      "envelope_digest": digest, "signed_by": key.key_id if key else None})


@dataclass(frozen=True)
class Release:
    """A stored statement as the shells hand it out: the envelope's exact bytes and its tag."""

    model: str
    version: int
    stage: str
    move: str
    key_id: str | None
    envelope: bytes
    digest: str  # SHA-256 of the envelope bytes: the ETag
    created_at: str

    @classmethod
    def of(cls, stored: StoredRelease) -> Release:
        return cls(model=stored.model, version=stored.version, stage=stored.stage,
                   move=stored.move, key_id=stored.key_id,
                   envelope=stored.envelope_json.encode("ascii"), digest=stored.envelope_digest,
                   created_at=_iso(stored.created_at))

    def summary(self) -> dict:
        """Everything but the envelope itself, for lists."""
        return {"model": self.model, "version": self.version, "stage": self.stage,
                "move": self.move, "key_id": self.key_id, "signed": self.key_id is not None,
                "digest": self.digest, "created_at": self.created_at}


def current_release(catalogue: Catalogue, model: str, stage: str) -> Release:
    """The statement a serving system checks before loading the stage's document."""
    check_name(model, what="model")
    check_name(stage, what="stage")
    with UnitOfWork(catalogue, write=False) as uow:
        stored = uow.releases.current(model, stage)
    if stored is None:
        # Say precisely why: no such model or stage, nobody holds it, or its holder has none.
        holder = find_document(catalogue, model, stage=stage)
        raise NotFound(f"v{holder.version}, holding {stage!r} of {model!r}, entered it without "
                       "a release statement (only exclusive stages have them)", place="stage")
    return Release.of(stored)


def releases_of_version(catalogue: Catalogue, model: str, number: int) -> list[Release]:
    with UnitOfWork(catalogue, write=False) as uow:
        find_version(uow, find_model(uow, model), number)
        return [Release.of(s) for s in uow.releases.of_version(model, number)]


def release_by_digest(catalogue: Catalogue, model: str, digest: str) -> Release:
    check_name(model, what="model")
    with UnitOfWork(catalogue, write=False) as uow:
        stored = uow.releases.by_digest(model, digest)
        if stored is None:
            raise NotFound(f"{model!r} has no release statement {digest}", place="statement")
        return Release.of(stored)
