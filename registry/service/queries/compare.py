"""The comparison page: two versions' schemas, features and metrics side by side, with the
intervals of any gate comparison made between them."""

from __future__ import annotations

import json
from dataclasses import dataclass
from typing import Any

from registry.errors import UserError
from registry.service.queries.common import number
from registry.service.queries.schemas import (
    FeatureDifference,
    SchemaComparison,
    compare_features,
    compare_schemas,
)
from registry.service.queries.versions import VersionPage, version_page
from registry.store.catalogue import Catalogue


@dataclass(frozen=True)
class MetricDifference:
    dataset: str
    metric: str
    before: float | None
    after: float | None
    difference: float | None


@dataclass(frozen=True)
class GateComparison:
    """A paired comparison a gate made between the two versions, with its interval."""

    report_id: int
    gate: str
    subject: str  # the metric, or the slice and metric
    difference: float | None
    low: float | None
    high: float | None
    method: str


@dataclass(frozen=True)
class ComparePage:
    a: VersionPage
    b: VersionPage
    input_diff: SchemaComparison
    output_diff: SchemaComparison
    feature_diff: tuple[FeatureDifference, ...]
    metrics: tuple[MetricDifference, ...]
    gate_comparisons: tuple[GateComparison, ...]
    raw_input: tuple[str, str]  # each input schema as indented JSON, for the side-by-side view


def metric_differences(a: VersionPage, b: VersionPage) -> tuple[MetricDifference, ...]:
    """Metrics of both versions on the same evaluation dataset, with B minus A."""
    before_by_dataset = {e.dataset: dict(e.metrics) for e in a.evaluations}
    found = []
    for evaluation in b.evaluations:
        before = before_by_dataset.get(evaluation.dataset)
        if before is None:
            continue
        for name, value in evaluation.metrics:
            if name in before:
                old = before[name]
                found.append(MetricDifference(
                    evaluation.dataset, name, old, value,
                    value - old if value is not None and old is not None else None))
    return tuple(found)


def _gate_comparisons(a: VersionPage, b: VersionPage) -> tuple[GateComparison, ...]:
    """Rows of quality-gate evidence where one version was judged against the other."""
    found: list[GateComparison] = []
    seen: set[tuple[str, str]] = set()  # the newest report's figures only, once each
    for candidate, incumbent in ((b, a), (a, b)):
        for report in candidate.reports:
            for result in report.results:
                for item in result.evidence:
                    if item.label not in ("comparisons", "slices") or item.table is None:
                        continue
                    if not any(i.label == "incumbent version" and i.text == str(incumbent.number)
                               for i in result.evidence):
                        continue
                    columns = item.table.columns
                    for row in item.table.rows:
                        cell = dict(zip(columns, row, strict=True))
                        subject = cell.get("metric", "")
                        if cell.get("value"):
                            subject = f"{cell.get('column', '')} = {cell['value']}: {subject}"
                        subject = (f"v{candidate.number} against v{incumbent.number}, "
                                   f"{subject}")
                        if (result.gate, subject) in seen:
                            continue
                        seen.add((result.gate, subject))
                        found.append(GateComparison(
                            report.id, result.gate, subject, _float(cell.get("difference")),
                            _float(cell.get("interval from")), _float(cell.get("interval to")),
                            cell.get("method", "")))
    return tuple(found)


def _float(text: Any) -> float | None:
    try:
        return number(float(str(text).replace(",", "")))
    except ValueError:
        return None


def compare_page(catalogue: Catalogue, model: str, a: int, b: int) -> ComparePage:
    if a == b:
        raise UserError("compare a version with another one, not with itself", place="b")
    first, second = version_page(catalogue, model, a), version_page(catalogue, model, b)
    return ComparePage(
        a=first, b=second,
        input_diff=compare_schemas(first.input_schema, second.input_schema),
        output_diff=compare_schemas(first.output_schema, second.output_schema),
        feature_diff=tuple(compare_features(first.stored_features, second.stored_features,
                                            first.input_schema, second.input_schema)),
        metrics=metric_differences(first, second),
        gate_comparisons=_gate_comparisons(first, second),
        raw_input=(json.dumps(first.input_schema, indent=2),
                   json.dumps(second.input_schema, indent=2)))

