"""Release statements: in-toto Statement v1 documents saying that a document entered or left
a stage of a model, with the gates, approvals and waivers behind the move.

Pure: plain data in, canonical JSON bytes out, and back. Source: the in-toto Attestation
Framework, Statement layer v1 (github.com/in-toto/attestation, spec/v1/statement.md):

    {"_type": "https://in-toto.io/Statement/v1",
     "subject": [{"name": ..., "digest": {"sha256": ...}}],
     "predicateType": URI, "predicate": {...}}

Layout of our predicate with an example and test vectors: docs/release-statements.md.
"""

from __future__ import annotations

import json
import re
from dataclasses import dataclass
from typing import Any

from registry.canonical_json import canonical_json

STATEMENT_TYPE = "https://in-toto.io/Statement/v1"
PAYLOAD_TYPE = "application/vnd.in-toto+json"  # in-toto envelope layer: the DSSE payloadType
PREDICATE_TYPE = "https://lockkeeper.invalid/release-statement/v1"
MOVES = ("entered", "left")
REASONS = ("promotion", "rollback", "retirement")
SHA256 = re.compile(r"^[0-9a-f]{64}$")


class MalformedStatement(ValueError):
    """The payload is not a release statement of ours; the message names the field."""


@dataclass(frozen=True)
class GateStatus:
    gate: str
    status: str  # passed | waived | failed


@dataclass(frozen=True)
class Approval:
    who: str
    note: str


@dataclass(frozen=True)
class WaiverRecord:
    gate: str
    who: str
    reason: str


@dataclass(frozen=True)
class ReleaseStatement:
    """What a release statement says, as plain data.

    move: `entered` (the document may now serve in the stage) or `left` (it may not any more);
    previous_holder / holder_after: the version holding the stage before and after the move;
    gate_report_digest: SHA-256 of the canonical JSON of the gate report behind the move (None
    for a retirement, which runs no gates); audit_event_hash: the hash of the audit event that
    recorded the move, so the statement points into the tamper-evident log."""

    model: str
    version: int
    stage: str
    move: str
    reason: str
    document_sha256: str
    issued_at: str
    previous_holder: int | None
    holder_after: int | None
    gate_report_digest: str | None
    gates: tuple[GateStatus, ...]
    approvals: tuple[Approval, ...]
    waivers: tuple[WaiverRecord, ...]
    signing_key_id: str | None
    audit_event_sequence: int
    audit_event_hash: str

    @property
    def subject_name(self) -> str:
        return f"{self.model}@{self.version}"

    def to_dict(self) -> dict[str, Any]:
        gate_report = None
        if self.gate_report_digest is not None:
            gate_report = {"digest": {"sha256": self.gate_report_digest},
                           "gates": [{"gate": g.gate, "status": g.status} for g in self.gates]}
        return {
            "_type": STATEMENT_TYPE,
            "subject": [{"name": self.subject_name,
                         "digest": {"sha256": self.document_sha256}}],
            "predicateType": PREDICATE_TYPE,
            "predicate": {
                "model": self.model, "version": self.version, "stage": self.stage,
                "move": self.move, "reason": self.reason, "issued_at": self.issued_at,
                "previous_holder": self.previous_holder, "holder_after": self.holder_after,
                "gate_report": gate_report,
                "approvals": [{"who": a.who, "note": a.note} for a in self.approvals],
                "waivers": [{"gate": w.gate, "who": w.who, "reason": w.reason}
                            for w in self.waivers],
                "signing_key_id": self.signing_key_id,
                "audit_event": {"sequence": self.audit_event_sequence,
                                "hash": self.audit_event_hash},
            },
        }

    def to_payload(self) -> bytes:
        """The DSSE payload: canonical JSON (sorted keys, no spaces, UTF-8)."""
        return canonical_json(self.to_dict())


def _field(document: dict, name: str, kind: type | tuple[type, ...], place: str) -> Any:
    if name not in document:
        raise MalformedStatement(f"{place} has no {name!r}")
    value = document[name]
    if not isinstance(value, kind) or (kind is int and isinstance(value, bool)):
        raise MalformedStatement(f"{place}.{name} has the wrong type")
    return value


def _optional_int(document: dict, name: str) -> int | None:
    value = document.get(name)
    if value is not None and (not isinstance(value, int) or isinstance(value, bool)):
        raise MalformedStatement(f"predicate.{name} must be a version number or null")
    return value


def _sha256(value: object, place: str) -> str:
    if not isinstance(value, str) or not SHA256.match(value):
        raise MalformedStatement(f"{place} must be 64 lowercase hex digits")
    return value


def _strings(items: object, keys: tuple[str, ...], place: str) -> list[tuple[str, ...]]:
    if not isinstance(items, list):
        raise MalformedStatement(f"{place} must be a list")
    rows = []
    for index, item in enumerate(items):
        if not isinstance(item, dict) or not all(isinstance(item.get(k), str) for k in keys):
            raise MalformedStatement(f"{place}[{index}] must hold the strings "
                                     f"{', '.join(keys)}")
        rows.append(tuple(item[k] for k in keys))
    return rows


def parse_statement(payload: bytes) -> ReleaseStatement:
    """Read a release statement from a DSSE payload, checking every field it relies on."""
    try:
        document = json.loads(payload)
    except (UnicodeDecodeError, json.JSONDecodeError):
        raise MalformedStatement("the payload is not JSON") from None
    if not isinstance(document, dict):
        raise MalformedStatement("the statement must be a JSON object")
    if document.get("_type") != STATEMENT_TYPE:
        raise MalformedStatement(f"_type must be {STATEMENT_TYPE}")
    if document.get("predicateType") != PREDICATE_TYPE:
        raise MalformedStatement(f"predicateType must be {PREDICATE_TYPE}")
    subjects = _field(document, "subject", list, "statement")
    if len(subjects) != 1 or not isinstance(subjects[0], dict):
        raise MalformedStatement("a release statement has exactly one subject")
    subject = subjects[0]
    name = _field(subject, "name", str, "subject[0]")
    digest = _field(subject, "digest", dict, "subject[0]")
    document_sha256 = _sha256(digest.get("sha256"), "subject[0].digest.sha256")
    predicate = _field(document, "predicate", dict, "statement")
    model = _field(predicate, "model", str, "predicate")
    version = _field(predicate, "version", int, "predicate")
    if name != f"{model}@{version}":
        raise MalformedStatement(f"subject name {name!r} is not {model}@{version}")
    move = _field(predicate, "move", str, "predicate")
    reason = _field(predicate, "reason", str, "predicate")
    if move not in MOVES or reason not in REASONS:
        raise MalformedStatement("predicate.move or predicate.reason is not one we write")
    gate_report = predicate.get("gate_report")
    gates: list[GateStatus] = []
    report_digest = None
    if gate_report is not None:
        if not isinstance(gate_report, dict) or not isinstance(gate_report.get("digest"), dict):
            raise MalformedStatement("predicate.gate_report must hold a digest")
        report_digest = _sha256(gate_report["digest"].get("sha256"),
                                "predicate.gate_report.digest.sha256")
        gates = [GateStatus(*row) for row in _strings(gate_report.get("gates"),
                                                      ("gate", "status"),
                                                      "predicate.gate_report.gates")]
    audit = _field(predicate, "audit_event", dict, "predicate")
    key_id = predicate.get("signing_key_id")
    if key_id is not None and not isinstance(key_id, str):
        raise MalformedStatement("predicate.signing_key_id must be a string or null")
    return ReleaseStatement(
        model=model, version=version, stage=_field(predicate, "stage", str, "predicate"),
        move=move, reason=reason, document_sha256=document_sha256,
        issued_at=_field(predicate, "issued_at", str, "predicate"),
        previous_holder=_optional_int(predicate, "previous_holder"),
        holder_after=_optional_int(predicate, "holder_after"),
        gate_report_digest=report_digest, gates=tuple(gates),
        approvals=tuple(Approval(*row) for row in _strings(
            predicate.get("approvals", []), ("who", "note"), "predicate.approvals")),
        waivers=tuple(WaiverRecord(*row) for row in _strings(
            predicate.get("waivers", []), ("gate", "who", "reason"), "predicate.waivers")),
        signing_key_id=key_id,
        audit_event_sequence=_field(audit, "sequence", int, "predicate.audit_event"),
        audit_event_hash=_sha256(audit.get("hash"), "predicate.audit_event.hash"))
