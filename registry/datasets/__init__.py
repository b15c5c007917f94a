"""Datasets: streaming readers, content digests, profiles, overlap sketches and drift.

Pure code on Arrow batches and numpy arrays; the catalogue and the command line sit above it.
The names below load their module on first use (PEP 562), so fingerprinting a folder does not
wait for the drift and comparison code at start-up, before its workers begin.
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from registry.datasets.comparison import DatasetComparison, compare
    from registry.datasets.drift import (
        ColumnDrift,
        jensen_shannon,
        ks_two_sample,
        l_infinity,
        psi,
        psi_level,
    )
    from registry.datasets.errors import (
        ColumnsNotMatching,
        DatasetFileError,
        EmptyDataset,
        ValueNotParsing,
    )
    from registry.datasets.fingerprint import (
        DatasetFingerprint,
        fingerprint_batches,
        fingerprint_file,
        fingerprint_source,
        key_set_digest,
        load_fingerprint,
        merge_fingerprints,
        schema_fingerprint,
    )
    from registry.datasets.locations import SourceFile
    from registry.datasets.profile import ColumnProfile
    from registry.datasets.sketch import (
        BottomKSketch,
        Overlap,
        containment,
        intersection,
        jaccard,
        overlap,
    )
    from registry.datasets.workers import DatasetRun, fingerprint_dataset

_HOMES = {
    "comparison": ["DatasetComparison", "compare"],
    "drift": ["ColumnDrift", "jensen_shannon", "ks_two_sample", "l_infinity", "psi",
              "psi_level"],
    "errors": ["ColumnsNotMatching", "DatasetFileError", "EmptyDataset", "ValueNotParsing"],
    "fingerprint": ["DatasetFingerprint", "fingerprint_batches", "fingerprint_file",
                    "fingerprint_source", "key_set_digest", "load_fingerprint",
                    "merge_fingerprints", "schema_fingerprint"],
    "locations": ["SourceFile"],
    "profile": ["ColumnProfile"],
    "sketch": ["BottomKSketch", "Overlap", "containment", "intersection", "jaccard", "overlap"],
    "workers": ["DatasetRun", "fingerprint_dataset"],
}
_HOME_OF = {name: module for module, names in _HOMES.items() for name in names}

__all__ = [
    "BottomKSketch", "ColumnDrift", "ColumnProfile", "ColumnsNotMatching", "DatasetComparison",
    "DatasetFileError", "DatasetFingerprint", "DatasetRun", "EmptyDataset", "Overlap",
    "SourceFile", "ValueNotParsing", "compare", "containment", "fingerprint_batches",
    "fingerprint_dataset", "fingerprint_file", "fingerprint_source",
    "intersection", "jaccard", "jensen_shannon", "key_set_digest", "ks_two_sample",
    "l_infinity", "load_fingerprint", "merge_fingerprints", "overlap", "psi", "psi_level",
    "schema_fingerprint",
]
assert sorted(__all__) == sorted(_HOME_OF)


def __getattr__(name: str) -> Any:
    module = _HOME_OF.get(name)
    if module is None:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    value = getattr(importlib.import_module(f"{__name__}.{module}"), name)
    globals()[name] = value  # later reads find it without coming here
    return value
