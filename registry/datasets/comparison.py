"""Comparing two fingerprints: how much the records overlap and how far each column drifted."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

from registry.datasets.drift import ColumnDrift, column_drift
from registry.datasets.fingerprint import DatasetFingerprint
from registry.datasets.sketch import Overlap, overlap


@dataclass(frozen=True)
class DatasetComparison:
    """A is the reference and B the current dataset; containment is B's share found in A."""

    overlap: Overlap
    feature_overlap: Overlap
    drift: Mapping[str, ColumnDrift]
    same_content: bool
    same_schema: bool

    def to_dict(self) -> dict[str, Any]:
        return {"overlap": self.overlap.to_dict(),
                "feature_overlap": self.feature_overlap.to_dict(),
                "drift": {name: d.to_dict() for name, d in self.drift.items()},
                "same_content": self.same_content, "same_schema": self.same_schema}


def compare(reference: DatasetFingerprint, current: DatasetFingerprint) -> DatasetComparison:
    """Overlap of records (and of feature records) and drift of every column both hold."""
    drift = {}
    for name, column in reference.profile.items():
        if name in current.profile:
            found = column_drift(column, current.profile[name])
            if found is not None:
                drift[name] = found
    return DatasetComparison(
        overlap=overlap(reference.sketch, current.sketch),
        feature_overlap=overlap(reference.feature_sketch, current.feature_sketch),
        drift=drift,
        same_content=reference.content_digest == current.content_digest,
        same_schema=reference.schema_fingerprint == current.schema_fingerprint)
