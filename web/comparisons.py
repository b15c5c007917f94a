"""Metric differences between two versions and drift between two datasets, for the pages.

Drift is computed by registry.datasets.compare; when stored fingerprints cannot be compared the
page says so rather than inventing numbers of its own.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from registry.datasets import DatasetFingerprint, compare
from web.pages import EvaluationView, VersionPage


@dataclass(frozen=True)
class MetricDifference:
    dataset: str
    metric: str
    before: float | None
    after: float | None
    difference: float | None
    interval_before: tuple[Any, Any]
    interval_after: tuple[Any, Any]


def _finite(value: Any) -> bool:
    return isinstance(value, (int, float)) and not isinstance(value, bool) and math.isfinite(value)


def metric_differences(a: VersionPage, b: VersionPage) -> list[MetricDifference]:
    """Metrics of both versions on the same evaluation dataset, with B minus A."""
    by_dataset_a: dict[str, EvaluationView] = {e.dataset: e for e in a.evaluations}
    found = []
    for evaluation in b.evaluations:
        other = by_dataset_a.get(evaluation.dataset)
        if other is None:
            continue
        before = {name: (value, low, high) for name, value, low, high in other.metrics}
        for name, value, low, high in evaluation.metrics:
            if name not in before:
                continue
            old, old_low, old_high = before[name]
            difference = value - old if _finite(value) and _finite(old) else None
            found.append(MetricDifference(evaluation.dataset, name, old if _finite(old) else None,
                                          value if _finite(value) else None, difference,
                                          (old_low, old_high), (low, high)))
    return found


@dataclass(frozen=True)
class ColumnDriftView:
    column: str
    psi: Any
    level: str
    others: tuple[tuple[str, Any], ...]


@dataclass(frozen=True)
class DriftView:
    available: bool
    note: str
    jaccard: Any = None
    containment: Any = None
    columns: tuple[ColumnDriftView, ...] = ()


def drift_between(reference: Any, current: Any) -> DriftView:
    try:
        result = compare(DatasetFingerprint.from_dict(reference),
                         DatasetFingerprint.from_dict(current))
    except Exception as error:  # stored fingerprints that this build cannot read
        return DriftView(False, f"the stored fingerprints cannot be compared "
                                f"({type(error).__name__}: {str(error)[:120]})")
    columns = []
    for column, drift in sorted(result.drift.items()):
        others = tuple((name, getattr(drift, name)) for name in
                       ("ks_statistic", "ks_p_value", "jensen_shannon", "l_infinity")
                       if getattr(drift, name, None) is not None)
        columns.append(ColumnDriftView(column, getattr(drift, "psi", None),
                                       str(getattr(drift, "level", "")), others))
    overlap = result.overlap
    return DriftView(True, "", getattr(overlap, "jaccard", None),
                     getattr(overlap, "containment", None), tuple(columns))
