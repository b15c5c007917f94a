"""Datasets: streaming readers, content digests, profiles, overlap sketches and drift.

Pure code on Arrow batches and numpy arrays; the catalogue and the command line sit above it.
"""

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

__all__ = [
    "BottomKSketch", "ColumnDrift", "ColumnProfile", "ColumnsNotMatching", "DatasetComparison",
    "DatasetFileError", "DatasetFingerprint", "DatasetRun", "EmptyDataset", "Overlap",
    "SourceFile", "ValueNotParsing", "compare", "containment", "fingerprint_batches",
    "fingerprint_dataset", "fingerprint_file", "fingerprint_source",
    "intersection", "jaccard", "jensen_shannon", "key_set_digest", "ks_two_sample",
    "l_infinity", "load_fingerprint", "merge_fingerprints", "overlap", "psi", "psi_level",
    "schema_fingerprint",
]

