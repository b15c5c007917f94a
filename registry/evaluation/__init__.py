"""Metrics and paired comparisons computed from predictions files: pure numpy, no catalogue."""

from registry.evaluation.bootstrap import BootstrapResult, paired_bootstrap, resample_weights
from registry.evaluation.comparison import (
    ComparisonReport,
    Difference,
    Matching,
    compare,
    pair_rows,
)
from registry.evaluation.delong import auc_covariance, auc_standard_error, delong_difference
from registry.evaluation.mcnemar import mcnemar_exact_p_value
from registry.evaluation.metrics import (
    CalibrationBin,
    MetricReport,
    compute_metrics,
)
from registry.evaluation.predictions import (
    Predictions,
    PredictionsError,
    UndefinedMetric,
    build_predictions,
    check_row_ids,
    read_predictions,
)
from registry.evaluation.report import EvaluationReport, evaluate, evaluate_file
from registry.evaluation.slices import (
    SliceDifference,
    SliceReport,
    SliceResult,
    compare_slices,
    slice_metrics,
)
from registry.multiple_testing import holm_adjust

__all__ = [
    "BootstrapResult", "CalibrationBin", "ComparisonReport", "Difference", "EvaluationReport",
    "Matching", "MetricReport", "Predictions",
    "PredictionsError", "SliceDifference", "SliceReport", "SliceResult", "UndefinedMetric",
    "auc_covariance", "auc_standard_error", "build_predictions", "check_row_ids", "compare",
    "compare_slices",
    "compute_metrics", "delong_difference", "evaluate", "evaluate_file", "holm_adjust",
    "mcnemar_exact_p_value", "paired_bootstrap", "pair_rows", "read_predictions",
    "resample_weights", "slice_metrics",
]
