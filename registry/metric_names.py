"""The metrics each task is scored by, and which way each one improves.

Kept apart from the evaluation package (numpy, scikit-learn's definitions) so that reading a
stored state, as `status` does, needs neither.
"""

from __future__ import annotations

METRIC_NAMES = {
    "binary": ("roc_auc", "average_precision", "log_loss", "brier", "accuracy"),
    "regression": ("rmse", "mae", "r2"),
    "multiclass": ("accuracy", "macro_f1", "log_loss"),
}
HIGHER_IS_BETTER = {
    "roc_auc": True, "average_precision": True, "accuracy": True, "macro_f1": True,
    "r2": True, "log_loss": False, "brier": False, "rmse": False, "mae": False,
}
