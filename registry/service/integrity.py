"""`audit verify`: recompute the audit chain, check the signed checkpoints (and one kept outside),
compare every deciding row with the row digests the chain recorded, recompute every blob digest
and registration digest, and check every evaluation against what the audit log recorded."""

from __future__ import annotations

import dataclasses
import hashlib
import json
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from registry.canonical_json import digest_of
from registry.errors import UserError
from registry.evaluation.record import UnreadableEvaluationRecord, read_evaluation_record
from registry.node_ids import dataset_id, evaluation_id, version_id
from registry.service.contract_integrity import contract_findings, contract_record_key
from registry.service.registration import registration_record
from registry.service.row_coverage import ReplayedRows, compare_all, parse_rows
from registry.service.shape_conversion import ACTION as CONVERT_ACTION
from registry.signing.checkpoints import SignedCheckpoint, from_document, is_signed_by
from registry.store import tables as t
from registry.store.audit import GENESIS_HASH, AuditRecord, verify_chain
from registry.store.catalogue import Catalogue
from registry.store.unit_of_work import UnitOfWork

MAX_CHECKPOINT_BYTES = 64_000


@dataclass(frozen=True)
class Finding:
    place: str  # e.g. "audit event 17", "blob 3fa1...", "stage_holdings (id=4) column stage"
    problem: str
    # For a deciding row that differs from what the chain recorded: which one, and where.
    table: str | None = None
    key: dict[str, Any] | None = None
    column: str | None = None


@dataclass(frozen=True)
class VerificationReport:
    ok: bool
    events: int
    blobs: int
    versions: int
    datasets: int
    evaluations: int = 0
    findings: list[Finding] = field(default_factory=list)
    rows: int = 0              # covered rows compared with the chain
    checkpoints: int = 0
    newest_checkpoint: dict[str, Any] | None = None
    signed: bool = False       # whether the catalogue has a signing key to check against

    @property
    def first_broken_link(self) -> str | None:
        return self.findings[0].place if self.findings else None

    def to_dict(self) -> dict[str, Any]:
        return {"ok": self.ok, "events": self.events, "blobs": self.blobs,
                "versions": self.versions, "datasets": self.datasets,
                "evaluations": self.evaluations, "rows": self.rows,
                "checkpoints": self.checkpoints, "newest_checkpoint": self.newest_checkpoint,
                "signed": self.signed, "first_broken_link": self.first_broken_link,
                "findings": [dataclasses.asdict(f) for f in self.findings]}


@dataclass
class _ChainWalk:
    """What one pass over the stored events gathers besides the chain's own breaks."""

    replayed: ReplayedRows = field(default_factory=ReplayedRows)
    registered: dict[str, dict] = field(default_factory=dict)
    hashes: dict[int, str] = field(default_factory=dict)  # of events that checkpoints name
    findings: list[Finding] = field(default_factory=list)
    events: int = 0


def _walk_chain(uow: UnitOfWork, wanted: set[int]) -> _ChainWalk:
    walk = _ChainWalk()

    def records():
        for row in uow.audit.events():
            try:
                details = json.loads(row.details_json)
            except json.JSONDecodeError:
                walk.findings.append(Finding(f"audit event {row.sequence}",
                                             "its details are not JSON"))
                details = {"unreadable": row.details_json}
            rows = parse_rows(row.rows_json)
            walk.replayed.replay(row.sequence, rows)
            if row.sequence in wanted:
                walk.hashes[row.sequence] = row.hash
            if row.action in ("version.register", "dataset.add", "evaluation.add"):
                walk.registered[row.subject] = details
            elif row.action == CONVERT_ACTION:
                _take_conversion(walk.registered, details)
            elif (key := contract_record_key(row.subject, row.action, details)) is not None:
                walk.registered[key] = details
            walk.events += 1
            yield AuditRecord(row.sequence, row.occurred_at, row.actor, row.action,
                              row.subject, details, row.previous_hash, row.hash, rows)

    # A missing head row reads as an empty chain, which the stored events then contradict.
    breaks = verify_chain(records(), uow.audit.head() or (0, GENESIS_HASH))
    walk.findings += [Finding(f"audit event {b.sequence}", b.problem) for b in breaks]
    walk.findings += [Finding(f"audit event {sequence}", problem)
                      for sequence, problem in walk.replayed.problems]
    return walk


def _take_conversion(registered: dict[str, dict], details: dict) -> None:
    """A stored-shape conversion (registry/service/shape_conversion.py) names, per registration
    it rewrote, the digests that now stand for it in place of those its event recorded."""
    converted = details.get("converted")
    if not isinstance(converted, dict):
        return
    for subject, digests in converted.items():
        if subject in registered and isinstance(digests, dict):
            registered[subject] = {**registered[subject], **digests}


def _row_findings(uow: UnitOfWork, walk: _ChainWalk) -> tuple[int, list[Finding]]:
    counted = 0

    def stored(table):
        nonlocal counted
        for row in uow.rows.scan(table):
            counted += 1
            yield row

    def rows_of_event(sequence: int):
        return parse_rows(uow.audit.rows_json_of(sequence))

    differences = compare_all(stored, walk.replayed, rows_of_event)
    return counted, [Finding(d.place, d.problem, d.table, d.key, d.column) for d in differences]


def _checkpoint_findings(uow: UnitOfWork, checkpoints: list[tuple[int, SignedCheckpoint]],
                         walk: _ChainWalk) -> list[Finding]:
    findings = []
    head = uow.audit.head()
    head_sequence = head[0] if head else 0
    for row_id, checkpoint in checkpoints:
        place = f"checkpoint {row_id} (event {checkpoint.sequence})"
        key = uow.keys.get(checkpoint.key_id)
        if key is None:
            findings.append(Finding(place, f"signed by key {checkpoint.key_id}, which the "
                                           "catalogue does not know"))
        elif not is_signed_by(checkpoint, key.public_key_pem):
            findings.append(Finding(place, "its signature does not verify: it was changed "
                                           "after signing"))
        else:
            findings += _extends(place, checkpoint, head_sequence, walk.hashes)
    return findings


def _extends(place: str, checkpoint: SignedCheckpoint, head_sequence: int,
             hashes: dict[int, str]) -> list[Finding]:
    """Whether the stored chain still holds the event a checkpoint signed."""
    if checkpoint.sequence > head_sequence:
        return [Finding(place, f"it signed event {checkpoint.sequence} but the chain ends at "
                               f"event {head_sequence}: history was cut")]
    if hashes.get(checkpoint.sequence) != checkpoint.head_hash:
        return [Finding(place, f"the chain's event {checkpoint.sequence} is not the one it "
                               "signed: history was rewritten")]
    return []


def _blob_findings(uow: UnitOfWork) -> tuple[int, list[Finding]]:
    """Each blob's pieces, in order, must follow on from each other and give its digest and
    size; read a piece at a time, as a blob may be larger than memory."""
    findings: list[Finding] = []
    count = 0
    current: tuple[str, int] | None = None
    hashed, length, gapless = hashlib.sha256(), 0, True

    def judge(digest: str, size: int) -> None:
        place, key = f"blob {digest}", {"digest": digest}
        if hashed.hexdigest() != digest:
            findings.append(Finding(place, "its content does not match its digest",
                                    t.Blob.__tablename__, key, "content"))
        elif size != length:
            findings.append(Finding(place, "its size is not the length of its content",
                                    t.Blob.__tablename__, key, "size"))
        elif not gapless:
            findings.append(Finding(place, "its pieces do not follow on from each other",
                                    t.BlobChunk.__tablename__, key, "position"))

    for piece in uow.blobs.scan():
        if current is None or piece.digest != current[0]:
            if current is not None:
                judge(*current)
            count += 1
            current = (piece.digest, piece.size)
            hashed, length, gapless = hashlib.sha256(), 0, True
        if piece.content is not None:
            gapless = gapless and piece.position == length
            hashed.update(piece.content)
            length += len(piece.content)
    if current is not None:
        judge(*current)
    return count, findings


def _version_findings(uow: UnitOfWork, registered: dict[str, dict]) -> tuple[int, list[Finding]]:
    findings = []
    links: dict[int, dict[str, list[str]]] = {}
    for linked_version, relation, name in uow.integrity.version_links():
        links.setdefault(linked_version, {}).setdefault(relation, []).append(name)
    count = 0
    for version, model_name in uow.integrity.versions():
        count += 1
        place = version_id(model_name, version.number)
        linked = links.get(version.id, {})
        try:
            recomputed = digest_of(registration_record(
                model_name, version.document_digest, version.document_kind,
                version.input_schema_json, version.output_schema_json, version.features_json,
                version.description, version.code_revision, version.author,
                linked.get("trained-on", []), linked.get("evaluated-on", []),
                version.parent_number, feed=_declared_feed(uow, version)))
        except (json.JSONDecodeError, TypeError, ValueError):
            findings.append(Finding(place, "its stored schemas or features are not readable JSON"))
            continue
        found = _registration_findings(place, recomputed, registered.get(place), {
            "registration_digest": version.registration_digest,
            "document_digest": version.document_digest,
            "stored_blob_digest": version.stored_blob_digest})
        findings += found
        if not found:
            findings += _document_findings(uow, version, place)
    return count, findings


def _declared_feed(uow: UnitOfWork, version: t.Version) -> str | None:
    feed = uow.feeds.declared_by_version(version)
    return feed.name if feed is not None else None


def _registration_findings(place: str, recomputed: str, recorded: dict | None,
                           stored: dict[str, str]) -> list[Finding]:
    """A registered row against what it was registered as: its own digest recomputed from its
    content, and each stored digest against the one its registration event recorded."""
    findings = []
    if recomputed != stored["registration_digest"]:
        findings.append(Finding(place, "its stored content no longer matches its registration "
                                       "digest: it was changed after registration"))
    if recorded is None:
        return findings + [Finding(place, "no registration event in the audit log")]
    for name, value in stored.items():
        if recorded.get(name) != value:
            findings.append(Finding(place, f"its {name.replace('_', ' ')} differs from the one "
                                           "the audit log recorded"))
            break
    return findings


def _document_findings(uow: UnitOfWork, version: t.Version, place: str) -> list[Finding]:
    """The stored bytes must still give the version's document digest."""
    from registry.documents import canonical_digest

    content = uow.blobs.find(version.stored_blob_digest)
    if content is None:
        return [Finding(place, "its document bytes are missing")]
    if version.document_kind == "pfa":
        try:
            digest = canonical_digest(content).sha256
        except Exception:  # the bytes no longer parse: that is the finding
            digest = None
    else:
        digest = hashlib.sha256(content).hexdigest()
    if digest != version.document_digest:
        return [Finding(place, "its stored document no longer gives its document digest")]
    return []


def _model_name(uow: UnitOfWork, model_id: int) -> str:
    """The name of a model a row refers to; the foreign key keeps the model there."""
    return uow.models.by_id(model_id).name


def _dataset_findings(uow: UnitOfWork, registered: dict[str, dict]) -> tuple[int, list[Finding]]:
    from registry.service.datasets import dataset_registration_digest, parents_of

    findings = []
    count = 0
    for dataset in uow.datasets.all():
        count += 1
        place = dataset_id(dataset.name)
        feed_of = _model_name(uow, dataset.feed_model_id) if dataset.feed_model_id else None
        recomputed = dataset_registration_digest(
            dataset.name, dataset.role, dataset.source_uri, dataset.content_digest,
            dataset.schema_fingerprint, dataset.fingerprint_digest, parents_of(uow, dataset),
            feed_of, uow.dataset_sources.of(dataset.id))
        findings += _registration_findings(place, recomputed, registered.get(place), {
            "registration_digest": dataset.registration_digest})
        content = uow.blobs.find(dataset.fingerprint_digest)
        if content is not None and \
                hashlib.sha256(content).hexdigest() != dataset.fingerprint_digest:
            findings.append(Finding(place, "its stored fingerprint no longer matches its digest"))
        try:
            stored = json.loads(content) if content is not None else {}
        except (json.JSONDecodeError, UnicodeDecodeError):
            stored = {}
        if not isinstance(stored, dict) or stored.get("content_digest") != dataset.content_digest:
            findings.append(Finding(place, "its stored fingerprint does not carry the content "
                                           "digest it was registered with"))
        elif stored.get("rows") != dataset.rows:
            findings.append(Finding(place, "its row count differs from its stored fingerprint's"))
        findings += _dataset_schema_findings(dataset, place)
    return count, findings


def _dataset_schema_findings(dataset: t.Dataset, place: str) -> list[Finding]:
    """The stored schema must still give the schema fingerprint the dataset was added with."""
    from registry.datasets.fingerprint import schema_fingerprint

    try:
        recomputed = schema_fingerprint(json.loads(dataset.schema_json))
    except Exception:  # the stored schema no longer parses: that is the finding
        recomputed = None
    if recomputed != dataset.schema_fingerprint:
        return [Finding(place, "its stored schema no longer gives its schema fingerprint")]
    return []


def _evaluation_findings(uow: UnitOfWork, registered: dict[str, dict]
                         ) -> tuple[int, list[Finding]]:
    """Metrics and predictions must be what the audit log recorded when the evaluation was added."""
    from registry.canonical_json import canonical_json

    findings = []
    count = 0
    for evaluation, model_name, number, dataset_name in uow.integrity.evaluations():
        count += 1
        place = evaluation_id(model_name, number, dataset_name)
        recorded = registered.get(place)
        try:
            metrics = read_evaluation_record(evaluation.metrics_json).metrics
        except UnreadableEvaluationRecord:
            findings.append(Finding(place, "its stored metrics are not a readable evaluation "
                                           "record"))
            metrics = None
        if recorded is None:
            findings.append(Finding(place, "no evaluation event in the audit log"))
        elif recorded.get("predictions_digest") != evaluation.predictions_digest:
            findings.append(Finding(place, "it points at other predictions than the audit log "
                                           "recorded"))
        elif recorded.get("dataset_content_digest") != evaluation.dataset_content_digest:
            findings.append(Finding(place, "its dataset content digest differs from the one the "
                                           "audit log recorded"))
        elif "metrics_digest" in recorded and recorded["metrics_digest"] != hashlib.sha256(
                evaluation.metrics_json.encode("utf-8")).hexdigest():
            findings.append(Finding(place, "its stored metrics no longer match the digest the "
                                           "audit log recorded"))
        elif metrics is not None and canonical_json(metrics) != canonical_json(
                recorded.get("metrics")):
            findings.append(Finding(place, "its stored metrics differ from the ones the audit "
                                           "log recorded"))
        content = uow.blobs.find(evaluation.predictions_digest)
        if content is None:
            findings.append(Finding(place, "its predictions are missing"))
        elif hashlib.sha256(content).hexdigest() != evaluation.predictions_digest:
            findings.append(Finding(place, "its stored predictions no longer match their digest"))
    return count, findings


def verify_catalogue(catalogue: Catalogue,
                     against: ExternalCheckpoint | None = None) -> VerificationReport:
    """Everything `audit verify` checks, first difference first: the chain (and a checkpoint
    kept outside, when given), the signed checkpoints, every deciding row against the chain's
    row digests, the blobs, then each registration against its recorded digests."""
    with UnitOfWork(catalogue, write=False) as uow:
        checkpoints = _guarded(uow, "checkpoints", [], uow.checkpoints.all)
        wanted = {checkpoint.sequence for _, checkpoint in checkpoints}
        if against is not None:
            wanted.add(against.checkpoint.sequence)
        walk = _walk_chain(uow, wanted)
        head = uow.audit.head()
        outside = [] if against is None else _extends(
            against.place, against.checkpoint, head[0] if head else 0, walk.hashes)
        checkpoint_findings = _guarded(uow, "checkpoints", [],
                                       lambda: _checkpoint_findings(uow, checkpoints, walk))
        rows, row_findings = _row_findings(uow, walk)
        blobs, blob_findings = _blob_findings(uow)
        versions, version_findings = _guarded(
            uow, "versions", (0, []), lambda: _version_findings(uow, walk.registered))
        datasets, dataset_findings = _guarded(
            uow, "datasets", (0, []), lambda: _dataset_findings(uow, walk.registered))
        evaluations, evaluation_findings = _guarded(
            uow, "evaluations", (0, []), lambda: _evaluation_findings(uow, walk.registered))
        contract = _guarded(uow, "contracts", [], lambda: [
            Finding(place, problem) for place, problem in contract_findings(uow, walk.registered)])
        has_key = _guarded(uow, "signing_keys", False, lambda: uow.keys.current() is not None)
    # The chain first, then a checkpoint kept outside, then the deciding rows (which include
    # the signing keys the stored checkpoints are checked with), then everything else.
    everything = (walk.findings + outside + row_findings + checkpoint_findings + blob_findings
                  + version_findings + dataset_findings + evaluation_findings + contract)
    newest = checkpoints[-1][1] if checkpoints else None
    return VerificationReport(
        ok=not everything, events=walk.events, blobs=blobs, versions=versions,
        datasets=datasets, evaluations=evaluations, findings=everything, rows=rows,
        checkpoints=len(checkpoints), signed=has_key,
        newest_checkpoint=None if newest is None else {
            "sequence": newest.sequence, "head_hash": newest.head_hash,
            "signed_at": newest.signed_at, "key_id": newest.key_id})


def _guarded(uow: UnitOfWork, what: str, empty: Any, check: Any) -> Any:
    """Run one of the checks that read rows through their mapped types. Tampered rows can make
    those reads fail (a timestamp that no longer parses, a reference to a row that is gone);
    the row digests name such a change first, so the check then just reports it could not run."""
    try:
        with uow.savepoint():
            return check()
    except Exception as error:  # any failure to read tampered rows is the finding itself
        finding = Finding(what, f"could not be checked: the stored rows no longer read back "
                                f"({type(error).__name__})")
        if isinstance(empty, tuple):
            return empty[0], [finding]
        return [finding] if isinstance(empty, list) else empty


@dataclass(frozen=True)
class ExternalCheckpoint:
    """A checkpoint document kept outside the catalogue, already checked against its own key."""

    place: str
    checkpoint: SignedCheckpoint
    public_key_pem: str


def read_external_checkpoint(path: Path) -> ExternalCheckpoint:
    place = f"checkpoint {path}"
    try:
        if path.stat().st_size > MAX_CHECKPOINT_BYTES:
            raise UserError("the file is too large to be a checkpoint", place=place)
        document = json.loads(path.read_bytes())
    except FileNotFoundError:
        raise UserError(f"no such file: {path}", place="--against") from None
    except (OSError, json.JSONDecodeError, UnicodeDecodeError) as error:
        raise UserError(f"not a readable checkpoint: {error}", place=place) from None
    checkpoint, public_key_pem = from_document(document, place=place)
    return ExternalCheckpoint(f"{place} (event {checkpoint.sequence})", checkpoint,
                              public_key_pem)
