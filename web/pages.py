"""What each page shows, read from the catalogue in one read-only unit of work per page.

Stored JSON is read defensively: a page renders what is present and says what is missing,
because rows written by other versions of Lockkeeper may hold less (or more) than this one knows.
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field
from typing import Any

from sqlalchemy import func, select

from registry.errors import NotFound
from registry.service import lineage as lineage_service
from registry.service.models import find_model, find_version, holders_by_stage, stages_by_version
from registry.service.recall import RecalledSource, recalled_upstream
from registry.store import tables as t
from registry.store.catalogue import Catalogue
from registry.store.lineage import utc_iso
from registry.store.unit_of_work import UnitOfWork

RECENT_EVENTS = 25


def loads(text: str | bytes | None, default: Any = None) -> Any:
    if text is None:
        return default
    try:
        return json.loads(text)
    except (TypeError, ValueError):
        return default


@dataclass(frozen=True)
class ModelLine:
    name: str
    description: str
    versions: int
    stages: dict[str, list[int]]


@dataclass(frozen=True)
class DatasetLine:
    name: str
    role: str
    rows: int
    recalled: bool
    flagged: bool


@dataclass(frozen=True)
class AuditLine:
    sequence: int
    occurred_at: str
    actor: str
    action: str
    subject: str
    lineage_node: str | None  # the subject as a lineage node, when it is one


@dataclass(frozen=True)
class CataloguePage:
    models: list[ModelLine]
    datasets: list[DatasetLine]
    events: list[AuditLine]


def _lineage_node(subject: str) -> str | None:
    try:
        node = lineage_service.normalise_node(subject)
    except Exception:
        return None
    return node if node.startswith(("dataset/", "model/")) and node == subject else None


def catalogue_page(catalogue: Catalogue) -> CataloguePage:
    with UnitOfWork(catalogue, write=False) as uow:
        flagged = lineage_service.flagged_keys(uow)
        models = []
        for model in uow.session.execute(select(t.Model).order_by(t.Model.name)).scalars():
            count = uow.session.execute(select(func.count()).select_from(t.Version)
                                        .where(t.Version.model_id == model.id)).scalar_one()
            models.append(ModelLine(model.name, model.description, count,
                                    holders_by_stage(uow, model)))
        datasets = [
            DatasetLine(d.name, d.role, d.rows, d.recalled_at is not None,
                        any(k.kind == "dataset" and k.ref == d.id for k in flagged))
            for d in uow.session.execute(select(t.Dataset).order_by(t.Dataset.name)).scalars()]
        events = [AuditLine(e.sequence, e.occurred_at, e.actor, e.action, e.subject,
                            _lineage_node(e.subject))
                  for e in uow.session.execute(select(t.AuditEvent).order_by(
                      t.AuditEvent.sequence.desc()).limit(RECENT_EVENTS)).scalars()]
        return CataloguePage(models, datasets, events)


@dataclass(frozen=True)
class VersionLine:
    number: int
    description: str
    author: str
    created_at: str
    stages: list[str]
    flagged: bool


@dataclass(frozen=True)
class StageEventLine:
    at: str
    version: int
    stage: str
    event: str
    by: str
    details: dict[str, Any]


@dataclass(frozen=True)
class GateResultView:
    gate: str
    status: str  # passed | failed | waived
    summary: str
    evidence: Any
    notes: list[str]


@dataclass(frozen=True)
class GateAttempt:
    id: int
    at: str
    version: int
    stage: str
    attempt: str
    passed: bool
    by: str
    results: list[GateResultView]
    readable: bool


@dataclass(frozen=True)
class ModelPage:
    name: str
    description: str
    stages: dict[str, list[int]]
    versions: list[VersionLine]
    timeline: list[StageEventLine]
    attempts: list[GateAttempt]


def _gate_results(report: Any) -> tuple[list[GateResultView], bool]:
    if not isinstance(report, dict) or not isinstance(report.get("results"), list):
        return [], False
    results = []
    for item in report["results"]:
        if not isinstance(item, dict):
            continue
        passed, waived = bool(item.get("passed")), bool(item.get("waived"))
        status = "waived" if waived else ("passed" if passed else "failed")
        notes = item.get("notes")
        if not isinstance(notes, list):
            notes = []
        results.append(GateResultView(gate=str(item.get("gate", "?")), status=status,
                                      summary=str(item.get("summary", "")),
                                      evidence=item.get("evidence"),
                                      notes=[str(n) for n in notes]))
    return results, True


def model_page(catalogue: Catalogue, name: str) -> ModelPage:
    with UnitOfWork(catalogue, write=False) as uow:
        model = find_model(uow, name)
        held = stages_by_version(uow, model)
        flagged = lineage_service.flagged_keys(uow)
        versions = uow.session.execute(select(t.Version).where(t.Version.model_id == model.id)
                                       .order_by(t.Version.number)).scalars().all()
        number_of = {v.id: v.number for v in versions}
        lines = [VersionLine(v.number, v.description, v.author, utc_iso(v.created_at),
                             held.get(v.number, []),
                             any(k.kind == "version" and k.ref == v.id for k in flagged))
                 for v in versions]
        timeline = [StageEventLine(utc_iso(e.created_at), number_of.get(e.version_id, 0),
                                   e.stage, e.event, e.created_by,
                                   loads(e.details_json, {}) or {})
                    for e in uow.session.execute(
                        select(t.StageEvent).where(t.StageEvent.model_id == model.id)
                        .order_by(t.StageEvent.created_at, t.StageEvent.id)).scalars()]
        attempts = []
        for row in uow.session.execute(select(t.GateReportRow)
                                       .where(t.GateReportRow.model_id == model.id)
                                       .order_by(t.GateReportRow.created_at.desc(),
                                                 t.GateReportRow.id.desc())).scalars():
            results, readable = _gate_results(loads(row.report_json))
            attempts.append(GateAttempt(row.id, utc_iso(row.created_at),
                                        number_of.get(row.version_id, 0), row.stage, row.attempt,
                                        row.passed, row.created_by, results, readable))
        return ModelPage(model.name, model.description, holders_by_stage(uow, model), lines,
                         timeline, attempts)


@dataclass(frozen=True)
class LinkedDataset:
    name: str
    relation: str
    recalled: bool


@dataclass(frozen=True)
class EvaluationView:
    dataset: str
    task: str
    n: Any
    created_at: str
    metrics: list[tuple[str, Any, Any, Any]]  # name, value, interval low, interval high
    # column, metric names, and a row (value, n, metric values) per slice value
    slices: list[tuple[str, list[str], list[tuple[str, Any, list[Any]]]]]
    readable: bool
    comparisons: list[tuple[str, Any, Any, Any, Any, str]] = field(default_factory=list)


@dataclass(frozen=True)
class VersionPage:
    model: str
    number: int
    description: str
    author: str
    code_revision: str
    created_at: str
    created_by: str
    parent_number: int | None
    document_digest: str
    document_kind: str
    document_summary: Any
    input_schema: Any
    output_schema: Any
    features: Any
    stages: list[str]
    datasets: list[LinkedDataset]
    evaluations: list[EvaluationView]
    recalled_sources: list[RecalledSource]
    other_versions: list[int] = field(default_factory=list)


def _number(value: Any) -> Any:
    return value if isinstance(value, (int, float)) and not isinstance(value, bool) else None


def _interval(document: dict, name: str) -> tuple[Any, Any]:
    """An interval from `intervals` or from `comparison`, whichever the evaluation holds."""
    for section in ("intervals", "confidence"):
        entry = document.get(section)
        if isinstance(entry, dict) and isinstance(entry.get(name), dict):
            item = entry[name]
            return (_number(item.get("ci_low", item.get("low"))),
                    _number(item.get("ci_high", item.get("high"))))
        if isinstance(entry, dict) and isinstance(entry.get(name), list) and len(entry[name]) == 2:
            return _number(entry[name][0]), _number(entry[name][1])
    return None, None


def _slice_reports(slices: Any) -> list[tuple[str, dict]]:
    """(column, {value: entry}) pairs from any of the stored forms: one report
    {"column", "values"}, a list of reports, a mapping column -> report (what the evaluation
    use case stores), or a mapping column -> {value: entry}."""
    if isinstance(slices, list):
        return [pair for item in slices for pair in _slice_reports(item)]
    if not isinstance(slices, dict):
        return []
    if isinstance(slices.get("values"), dict) and "column" in slices:
        return [(str(slices["column"]), slices["values"])]
    found = []
    for column, values in slices.items():
        if isinstance(values, dict) and isinstance(values.get("values"), dict):
            found.append((str(values.get("column", column)), values["values"]))
        elif isinstance(values, dict):
            found.append((str(column), values))
    return found


def _slices(document: dict) -> list:
    found = []
    for column, values in _slice_reports(document.get("slices")):
        names: list[str] = []
        rows = []
        for value, entry in values.items():
            if not isinstance(entry, dict):
                continue
            metrics = entry.get("metrics")
            if not isinstance(metrics, dict):
                metrics = {k: v for k, v in entry.items() if _number(v) is not None and k != "n"}
            for metric in metrics:
                if metric not in names:
                    names.append(str(metric))
            rows.append((str(value), entry.get("n"), metrics))
        found.append((column, names,
                      [(value, n, [m.get(name) for name in names]) for value, n, m in rows]))
    return found


def _comparisons(document: dict) -> list[tuple[str, Any, Any, Any, Any, str]]:
    """Differences against the baseline the evaluation was run with, with their intervals."""
    comparison = document.get("comparison")
    if not isinstance(comparison, dict):
        return []
    return [(str(name), _number(c.get("difference")), _number(c.get("ci_low")),
             _number(c.get("ci_high")), _number(c.get("p_value")), str(c.get("method", "")))
            for name, c in comparison.items() if isinstance(c, dict)]


def evaluation_view(dataset: str, row: t.Evaluation) -> EvaluationView:
    document = loads(row.metrics_json)
    if not isinstance(document, dict):
        return EvaluationView(dataset, row.task, None, utc_iso(row.created_at), [], [], False)
    metrics = document.get("metrics")
    if not isinstance(metrics, dict):
        metrics = {}
    listed = [(str(name), value, *_interval(document, name)) for name, value in metrics.items()]
    return EvaluationView(dataset, row.task, document.get("n"), utc_iso(row.created_at), listed,
                          _slices(document), True, _comparisons(document))


def version_page(catalogue: Catalogue, model_name: str, number: int) -> VersionPage:
    with UnitOfWork(catalogue, write=False) as uow:
        model = find_model(uow, model_name)
        version = find_version(uow, model, number)
        datasets = [LinkedDataset(d.name, relation, d.recalled_at is not None)
                    for d, relation in uow.session.execute(
                        select(t.Dataset, t.VersionDataset.relation)
                        .join(t.VersionDataset, t.VersionDataset.dataset_id == t.Dataset.id)
                        .where(t.VersionDataset.version_id == version.id)
                        .order_by(t.VersionDataset.relation, t.Dataset.name))]
        evaluations = [evaluation_view(name, row) for row, name in uow.session.execute(
            select(t.Evaluation, t.Dataset.name)
            .join(t.Dataset, t.Dataset.id == t.Evaluation.dataset_id)
            .where(t.Evaluation.version_id == version.id).order_by(t.Dataset.name))]
        others = list(uow.session.execute(
            select(t.Version.number).where(t.Version.model_id == model.id,
                                           t.Version.number != number)
            .order_by(t.Version.number)).scalars())
        return VersionPage(
            model=model.name, number=version.number, description=version.description,
            author=version.author, code_revision=version.code_revision,
            created_at=utc_iso(version.created_at), created_by=version.created_by,
            parent_number=version.parent_number, document_digest=version.document_digest,
            document_kind=version.document_kind,
            document_summary=loads(version.document_summary_json, {}),
            input_schema=loads(version.input_schema_json),
            output_schema=loads(version.output_schema_json),
            features=loads(version.features_json),
            stages=stages_by_version(uow, model).get(version.number, []),
            datasets=datasets, evaluations=evaluations,
            recalled_sources=recalled_upstream(uow, version), other_versions=others)


@dataclass(frozen=True)
class DatasetPage:
    name: str
    role: str
    rows: int
    source_uri: str
    content_digest: str
    schema_fingerprint: str
    created_at: str
    created_by: str
    recalled_at: str | None
    recall_reason: str
    recalled_by: str
    flagged_by: list[str]  # recalled datasets upstream of this one
    parents: list[str]
    children: list[str]
    versions: list[tuple[str, int, str]]  # model, number, relation
    schema: Any
    fingerprint: Any
    others: list[str]


def _dataset(uow: UnitOfWork, name: str) -> t.Dataset:
    row = uow.session.execute(select(t.Dataset).where(t.Dataset.name == name)).scalar_one_or_none()
    if row is None:
        raise NotFound(f"unknown dataset {name!r}", place="dataset")
    return row


def fingerprint_of(uow: UnitOfWork, row: t.Dataset) -> Any:
    blob = uow.session.get(t.Blob, row.fingerprint_digest)
    return loads(blob.content if blob is not None else None)


def dataset_page(catalogue: Catalogue, name: str) -> DatasetPage:
    from registry.store import lineage as walks

    with UnitOfWork(catalogue, write=False) as uow:
        row = _dataset(uow, name)
        up = walks.walk(uow.session, walks.seeds_for(walks.NodeKey("dataset", row.id)), "up")
        up_ids = [r.key.ref for r in up if r.key.kind == "dataset" and r.key.ref != row.id]
        flagged_by = sorted(uow.session.execute(
            select(t.Dataset.name).where(t.Dataset.id.in_(up_ids),
                                         t.Dataset.recalled_at.is_not(None))).scalars()
                            ) if up_ids else []
        parent = t.Dataset.__table__.alias("parent")
        child = t.Dataset.__table__.alias("child")
        parents = sorted(uow.session.execute(
            select(parent.c.name).join(t.DatasetParent, t.DatasetParent.parent_id == parent.c.id)
            .where(t.DatasetParent.child_id == row.id)).scalars())
        children = sorted(uow.session.execute(
            select(child.c.name).join(t.DatasetParent, t.DatasetParent.child_id == child.c.id)
            .where(t.DatasetParent.parent_id == row.id)).scalars())
        versions = [(m, n, r) for m, n, r in uow.session.execute(
            select(t.Model.name, t.Version.number, t.VersionDataset.relation)
            .join(t.Version, t.Version.id == t.VersionDataset.version_id)
            .join(t.Model, t.Model.id == t.Version.model_id)
            .where(t.VersionDataset.dataset_id == row.id)
            .order_by(t.Model.name, t.Version.number))]
        others = list(uow.session.execute(select(t.Dataset.name).where(t.Dataset.id != row.id)
                                          .order_by(t.Dataset.name)).scalars())
        return DatasetPage(
            name=row.name, role=row.role, rows=row.rows, source_uri=row.source_uri,
            content_digest=row.content_digest, schema_fingerprint=row.schema_fingerprint,
            created_at=utc_iso(row.created_at), created_by=row.created_by,
            recalled_at=utc_iso(row.recalled_at) if row.recalled_at else None,
            recall_reason=row.recall_reason or "", recalled_by=row.recalled_by or "",
            flagged_by=flagged_by, parents=parents, children=children, versions=versions,
            schema=loads(row.schema_json), fingerprint=fingerprint_of(uow, row), others=others)


def dataset_fingerprint(catalogue: Catalogue, name: str) -> Any:
    with UnitOfWork(catalogue, write=False) as uow:
        return fingerprint_of(uow, _dataset(uow, name))


def versions_for_comparison(catalogue: Catalogue, model_name: str, a: int, b: int):
    with UnitOfWork(catalogue, write=False) as uow:
        model = find_model(uow, model_name)
        find_version(uow, model, a)
        find_version(uow, model, b)
    return version_page(catalogue, model_name, a), version_page(catalogue, model_name, b)
