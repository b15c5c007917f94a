"""`audit verify`: recompute the audit chain, every blob digest and every registration digest,
and check every evaluation against what the audit log recorded when it was added."""

from __future__ import annotations

import hashlib
import json
from dataclasses import dataclass, field

from sqlalchemy import select

from registry.canonical_json import digest_of
from registry.service.registration import registration_record
from registry.store import tables as t
from registry.store.audit import AuditRecord, verify_chain
from registry.store.catalogue import Catalogue
from registry.store.unit_of_work import UnitOfWork


@dataclass(frozen=True)
class Finding:
    place: str  # e.g. "audit event 17", "blob 3fa1...", "model/main-burst-risk/version/2"
    problem: str


@dataclass(frozen=True)
class VerificationReport:
    ok: bool
    events: int
    blobs: int
    versions: int
    datasets: int
    evaluations: int = 0
    findings: list[Finding] = field(default_factory=list)

    @property
    def first_broken_link(self) -> str | None:
        return self.findings[0].place if self.findings else None


def _audit_findings(uow: UnitOfWork) -> tuple[int, list[Finding], dict[str, dict]]:
    rows = uow.session.execute(select(t.AuditEvent).order_by(t.AuditEvent.sequence)).scalars()
    records: list[AuditRecord] = []
    findings: list[Finding] = []
    registered: dict[str, dict] = {}
    for row in rows:
        try:
            details = json.loads(row.details_json)
        except json.JSONDecodeError:
            findings.append(Finding(f"audit event {row.sequence}", "its details are not JSON"))
            details = {"unreadable": row.details_json}
        records.append(AuditRecord(row.sequence, row.occurred_at, row.actor, row.action,
                                   row.subject, details, row.previous_hash, row.hash))
        if row.action in ("version.register", "dataset.add", "evaluation.add"):
            registered[row.subject] = details
    head = uow.session.get(t.AuditHead, 1)
    breaks = verify_chain(records, (head.sequence, head.hash) if head else None)
    findings += [Finding(f"audit event {b.sequence}", b.problem) for b in breaks]
    return len(records), findings, registered


def _blob_findings(uow: UnitOfWork) -> tuple[int, list[Finding]]:
    findings = []
    count = 0
    for digest, content in uow.session.execute(select(t.Blob.digest, t.Blob.content)):
        count += 1
        if hashlib.sha256(content).hexdigest() != digest:
            findings.append(Finding(f"blob {digest}", "its content does not match its digest"))
    return count, findings


def _version_findings(uow: UnitOfWork, registered: dict[str, dict]) -> tuple[int, list[Finding]]:
    findings = []
    links: dict[int, dict[str, list[str]]] = {}
    for version_id, relation, name in uow.session.execute(
            select(t.VersionDataset.version_id, t.VersionDataset.relation, t.Dataset.name)
            .join(t.Dataset, t.Dataset.id == t.VersionDataset.dataset_id)):
        links.setdefault(version_id, {}).setdefault(relation, []).append(name)
    count = 0
    rows = uow.session.execute(
        select(t.Version, t.Model.name).join(t.Model, t.Model.id == t.Version.model_id)
        .order_by(t.Model.name, t.Version.number))
    for version, model_name in rows:
        count += 1
        place = f"model/{model_name}/version/{version.number}"
        linked = links.get(version.id, {})
        try:
            recomputed = digest_of(registration_record(
                model_name, version.document_digest, version.document_kind,
                version.input_schema_json, version.output_schema_json, version.features_json,
                version.description, version.code_revision, version.author,
                linked.get("trained-on", []), linked.get("evaluated-on", []),
                version.parent_number))
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

    blob = uow.session.get(t.Blob, version.stored_blob_digest)
    if blob is None:
        return [Finding(place, "its document bytes are missing")]
    if version.document_kind == "pfa":
        try:
            digest = canonical_digest(blob.content).sha256
        except Exception:  # the bytes no longer parse: that is the finding
            digest = None
    else:
        digest = hashlib.sha256(blob.content).hexdigest()
    if digest != version.document_digest:
        return [Finding(place, "its stored document no longer gives its document digest")]
    return []


def _dataset_findings(uow: UnitOfWork, registered: dict[str, dict]) -> tuple[int, list[Finding]]:
    from registry.service.datasets import dataset_registration_digest, parents_of

    findings = []
    count = 0
    for dataset in uow.session.execute(select(t.Dataset).order_by(t.Dataset.name)).scalars():
        count += 1
        place = f"dataset/{dataset.name}"
        feed_of = uow.session.get_one(t.Model, dataset.feed_model_id).name \
            if dataset.feed_model_id else None
        recomputed = dataset_registration_digest(
            dataset.name, dataset.role, dataset.source_uri, dataset.content_digest,
            dataset.schema_fingerprint, dataset.fingerprint_digest, parents_of(uow, dataset),
            feed_of)
        findings += _registration_findings(place, recomputed, registered.get(place), {
            "registration_digest": dataset.registration_digest})
        blob = uow.session.get(t.Blob, dataset.fingerprint_digest)
        if blob is not None and hashlib.sha256(blob.content).hexdigest() != blob.digest:
            findings.append(Finding(place, "its stored fingerprint no longer matches its digest"))
        try:
            stored = json.loads(blob.content) if blob else {}
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
    rows = uow.session.execute(
        select(t.Evaluation, t.Model.name, t.Version.number, t.Dataset.name)
        .join(t.Version, t.Version.id == t.Evaluation.version_id)
        .join(t.Model, t.Model.id == t.Version.model_id)
        .join(t.Dataset, t.Dataset.id == t.Evaluation.dataset_id)
        .order_by(t.Model.name, t.Version.number, t.Dataset.name))
    for evaluation, model_name, number, dataset_name in rows:
        count += 1
        place = f"model/{model_name}/version/{number}/evaluation/{dataset_name}"
        recorded = registered.get(place)
        try:
            metrics = json.loads(evaluation.metrics_json)["metrics"]
        except (json.JSONDecodeError, KeyError, TypeError):
            findings.append(Finding(place, "its stored metrics are not readable JSON"))
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
        blob = uow.session.get(t.Blob, evaluation.predictions_digest)
        if blob is None:
            findings.append(Finding(place, "its predictions are missing"))
        elif hashlib.sha256(blob.content).hexdigest() != blob.digest:
            findings.append(Finding(place, "its stored predictions no longer match their digest"))
    return count, findings


def verify_catalogue(catalogue: Catalogue) -> VerificationReport:
    with UnitOfWork(catalogue, write=False) as uow:
        events, findings, registered = _audit_findings(uow)
        blobs, blob_findings = _blob_findings(uow)
        versions, version_findings = _version_findings(uow, registered)
        datasets, dataset_findings = _dataset_findings(uow, registered)
        evaluations, evaluation_findings = _evaluation_findings(uow, registered)
    everything = (findings + blob_findings + version_findings + dataset_findings
                  + evaluation_findings)
    return VerificationReport(ok=not everything, events=events, blobs=blobs, versions=versions,
                              datasets=datasets, evaluations=evaluations, findings=everything)
