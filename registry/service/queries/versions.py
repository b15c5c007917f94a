"""The version page: where it stands (and if refused, where and by which gates), its gate
reports with waivers and approvals, its schemas, features, datasets and evaluations."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from registry.errors import NotFound
from registry.evaluation.record import UnreadableEvaluationRecord, read_evaluation_record
from registry.service.queries.common import loads, moment, number
from registry.service.queries.models import Refusal, refusal_of
from registry.service.queries.recalls import recalled_sources
from registry.service.queries.reports import (
    ApprovalView,
    EvidenceItem,
    GateReportView,
    approval_view,
    evidence_items,
    report_view,
)
from registry.service.queries.schemas import FeatureRow, SchemaNode, feature_rows, schema_tree
from registry.service.recall import RecalledSource
from registry.store import tables as t
from registry.store.catalogue import Catalogue
from registry.store.unit_of_work import UnitOfWork


@dataclass(frozen=True)
class LinkedDataset:
    name: str
    relation: str  # trained-on | evaluated-on
    recalled: bool


@dataclass(frozen=True)
class SliceTable:
    column: str
    metrics: tuple[str, ...]
    rows: tuple[tuple[str, Any, tuple[Any, ...]], ...]  # value, n, one figure per metric


@dataclass(frozen=True)
class EvaluationView:
    dataset: str
    task: str
    n: Any
    created_at: str
    metrics: tuple[tuple[str, Any], ...]
    slices: tuple[SliceTable, ...]
    readable: bool  # False when the stored record is not one (docs/stored-shapes.md)


@dataclass(frozen=True)
class Standing:
    """The status line: the stages held, and the newest refusal not since overcome."""

    stages: tuple[str, ...]
    refusal: Refusal | None


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
    document_facts: tuple[EvidenceItem, ...]
    input_schema: Any
    output_schema: Any
    stored_features: Any  # the definitions as stored, for the semantic diff
    input_tree: SchemaNode | None
    output_tree: SchemaNode | None
    features: tuple[FeatureRow, ...]
    standing: Standing
    datasets: tuple[LinkedDataset, ...]
    evaluations: tuple[EvaluationView, ...]
    not_evaluated_on: tuple[str, ...]  # linked for evaluation, but no evaluation stored
    recalled_sources: tuple[RecalledSource, ...]
    reports: tuple[GateReportView, ...]  # newest first
    approvals: tuple[ApprovalView, ...]
    other_versions: tuple[int, ...]
    live_holder: int | None  # the version holding the top stage now, to compare with


def _slices(slices: dict[str, Any]) -> tuple[SliceTable, ...]:
    """The slice reports of an evaluation record: {column: {"column", "values": {value:
    {"n", "metrics": {...}}}}} (docs/stored-shapes.md)."""
    tables = []
    for column, report in slices.items():
        values = report.get("values") if isinstance(report, dict) else None
        if not isinstance(values, dict):
            continue
        names: list[str] = []
        for entry in values.values():
            metrics = entry.get("metrics") if isinstance(entry, dict) else None
            names += [m for m in (metrics if isinstance(metrics, dict) else {}) if m not in names]
        rows = []
        for value, entry in values.items():
            if not isinstance(entry, dict):
                continue
            figures: dict[str, Any] = (entry["metrics"] if isinstance(entry.get("metrics"), dict)
                                       else {})
            rows.append((str(value), number(entry.get("n")),
                         tuple(number(figures.get(m)) for m in names)))
        tables.append(SliceTable(str(report.get("column", column)), tuple(names), tuple(rows)))
    return tuple(tables)


def evaluation_view(dataset: str, row: t.Evaluation) -> EvaluationView:
    try:
        record = read_evaluation_record(row.metrics_json)
    except UnreadableEvaluationRecord:  # changed behind the catalogue's back: audit verify says
        return EvaluationView(dataset, row.task, None, moment(row.created_at), (), (), False)
    return EvaluationView(dataset, row.task, record.n, moment(row.created_at),
                          tuple((str(k), number(v)) for k, v in record.metrics.items()),
                          _slices(record.slices), True)


def _standing(stages: tuple[str, ...], reports: list[GateReportView]) -> Standing:
    for report in reports:  # newest first
        if report.passed:
            continue
        overcome = any(r.passed and r.stage == report.stage and r.id > report.id
                       for r in reports)
        if not overcome and report.stage not in stages:
            return Standing(stages, refusal_of(report))
        break
    return Standing(stages, None)


def version_page(catalogue: Catalogue, model_name: str, number_: int) -> VersionPage:
    from registry.service.gatekeeping import policy_of

    with UnitOfWork(catalogue, write=False) as uow:
        model = uow.models.named(model_name)
        if model is None:
            raise NotFound(f"unknown model {model_name!r}", place="model")
        version = uow.models.version(model.id, number_)
        if version is None:
            raise NotFound(f"model {model.name!r} has no version {number_}", place="version")
        holdings = uow.pages.holdings(model.id)
        stages = tuple(h.stage for h, n in holdings if n == number_)
        top = policy_of(model).top_stage
        live = [n for h, n in holdings if h.stage == top]
        reports = [report_view(row, model.name, n)
                   for row, n in uow.pages.gate_reports(model.id, version.id)]
        datasets = tuple(LinkedDataset(d.name, relation, d.recalled_at is not None)
                         for relation, d in uow.datasets.linked_to_version(version.id))
        evaluations = tuple(evaluation_view(name, row)
                            for row, name in uow.pages.evaluations(version.id))
        evaluated = {e.dataset for e in evaluations}
        input_schema = loads(version.input_schema_json)
        output_schema = loads(version.output_schema_json)
        return VersionPage(
            model=model.name, number=version.number, description=version.description,
            author=version.author, code_revision=version.code_revision,
            created_at=moment(version.created_at), created_by=version.created_by,
            parent_number=version.parent_number, document_digest=version.document_digest,
            document_kind=version.document_kind,
            document_facts=evidence_items(loads(version.document_summary_json, {})),
            input_schema=input_schema, output_schema=output_schema,
            stored_features=loads(version.features_json),
            input_tree=schema_tree(input_schema), output_tree=schema_tree(output_schema),
            features=tuple(feature_rows(loads(version.features_json))),
            standing=_standing(stages, reports), datasets=datasets, evaluations=evaluations,
            not_evaluated_on=tuple(d.name for d in datasets
                                   if d.relation == "evaluated-on" and d.name not in evaluated),
            recalled_sources=recalled_sources(uow, version), reports=tuple(reports),
            approvals=tuple(approval_view(a, version.number)
                            for a in uow.pages.approvals([version.id])),
            other_versions=tuple(v.number for v in uow.models.versions(model.id)
                                 if v.number != version.number),
            live_holder=live[-1] if live else None)
