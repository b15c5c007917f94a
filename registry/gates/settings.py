"""The gates a policy may name, and the settings each accepts: type, range and default.

The policy loader validates against this table; the gate functions read settings it completed.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable, Mapping
from typing import Any

# The metric names of DESIGN.md (`lockkeeper metrics`).
METRICS = ("roc_auc", "average_precision", "log_loss", "brier", "accuracy", "rmse", "mae", "r2",
           "macro_f1")


@dataclasses.dataclass(frozen=True)
class Setting:
    """One setting of one gate: its kind (`bool`, `int`, `number`, `metric`, `margins`), its
    default, and a check of its range that returns a complaint or None."""

    kind: str
    default: Any
    describe: str
    check: Callable[[Any], str | None] = lambda value: None


def _at_least(low: float) -> Callable[[Any], str | None]:
    return lambda value: None if value >= low else f"must be at least {low}"


def _probability_open(value: float) -> str | None:
    return None if 0 < value < 1 else "must lie strictly between 0 and 1"


def _share(value: float) -> str | None:
    return None if 0 <= value <= 1 else "must lie between 0 and 1"


GATE_SETTINGS: Mapping[str, Mapping[str, Setting]] = {
    "reads-live-feed": {
        "include_past_feeds": Setting(
            "bool", False, "also read the feed written by every earlier holder of the top stage"),
    },
    "rollback-safe": {},
    "output-readable": {},
    "live-data-check": {
        "unexercised_blocks": Setting(
            "bool", False, "block even on a break the live sample never exercises"),
        "min_rows": Setting(
            "int", 100, "fewest live-sample rows that can show a break unexercised", _at_least(1)),
    },
    "feature-meaning": {
        "require_acknowledgement": Setting(
            "bool", True, "needs-review changes need an approver's acknowledgement"),
    },
    "no-regression": {
        "metric": Setting("metric", "roc_auc", "the metric compared"),
        "margin": Setting("number", 0.01, "largest tolerated worsening", _at_least(0)),
        "confidence": Setting("number", 0.95, "two-sided confidence of the interval",
                              _probability_open),
    },
    "slice-guard": {
        "metric": Setting("metric", "roc_auc", "the metric compared per slice"),
        "margin": Setting("number", 0.02, "largest tolerated worsening in a slice", _at_least(0)),
        "alpha": Setting("number", 0.05, "significance level after Holm-Bonferroni adjustment",
                         _probability_open),
        "slice_margins": Setting("margins", {}, "slice value -> its own margin"),
    },
    "no-leakage": {
        "max_containment": Setting("number", 0.01, "largest tolerated share of evaluation "
                                   "records found in training", _share),
        "include_error_bound": Setting("bool", False, "judge the estimate plus its error bound"),
    },
    "fresh-data": {
        "max_age_days": Setting("int", 365, "oldest tolerated training data, in days",
                                _at_least(1)),
    },
    "lineage-complete": {},
    "approved": {
        "count": Setting("int", 1, "approvals needed from approvers other than the author",
                         _at_least(1)),
    },
    "shadow-agreement": {
        "min_rows": Setting("int", 1000, "fewest live rows both versions scored",
                            _at_least(1)),
        "min_agreement": Setting("number", 0.9, "smallest share of those rows on which they "
                                 "agree", _share),
    },
}

GATES = tuple(GATE_SETTINGS)


def validate_setting(setting: Setting, value: Any) -> tuple[Any, str | None]:
    """The value in its settled form, or a complaint about its type or range."""
    kind = setting.kind
    if kind == "bool":
        if not isinstance(value, bool):
            return value, "must be true or false"
    elif kind == "int":
        if isinstance(value, bool) or not isinstance(value, int):
            return value, "must be a whole number"
    elif kind == "number":
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            return value, "must be a number"
        value = float(value)
        if not math.isfinite(value):
            return value, "must be a finite number"
    elif kind == "metric":
        if value not in METRICS:
            return value, f"must be one of {', '.join(METRICS)}"
    elif kind == "margins":
        if not isinstance(value, Mapping):
            return value, "must be a table of slice value = margin"
        settled = {}
        for key, margin in value.items():
            if isinstance(margin, bool) or not isinstance(margin, (int, float)) or margin < 0:
                return value, f"margin of slice {key!r} must be a number at least 0"
            settled[str(key)] = float(margin)
        return settled, None
    return value, setting.check(value)
