"""The `[serving]` table of a policy: how evidence after release is summarised and judged.

    [serving]
    window = "1d"            # the period served rows and outcomes are summarised over
    retention_days = 90      # how long the compact served rows are kept for joins
    quality_margin = 0.02    # degrading: live quality's interval below evaluation by more
    quality_metric = "roc_auc"   # optional; by default roc_auc, mae or accuracy by task
"""

from __future__ import annotations

import dataclasses
from collections.abc import Mapping
from typing import Any

from registry.after_release.windows import window_seconds
from registry.gates.settings import METRICS

KEYS = ("window", "retention_days", "quality_margin", "quality_metric", "confidence")


@dataclasses.dataclass(frozen=True)
class ServingSettings:
    window: str = "1d"
    retention_days: int = 90
    quality_margin: float = 0.02
    quality_metric: str | None = None
    confidence: float = 0.95

    @property
    def window_seconds(self) -> int:
        return window_seconds(self.window)

    def to_dict(self) -> dict[str, Any]:
        document = dataclasses.asdict(self)
        if document["quality_metric"] is None:
            del document["quality_metric"]
        return document


def serving_settings(table: Any, fail) -> ServingSettings:
    """Validate a policy's `[serving]` table; `fail(message, place)` makes the policy error."""
    if not isinstance(table, Mapping):
        raise fail("must be a table", "serving")
    for key in table:
        if key not in KEYS:
            raise fail(f"unknown key {key!r}; [serving] has {', '.join(KEYS)}",
                       f"serving.{key}")
    settings = ServingSettings()
    values: dict[str, Any] = {}
    if "window" in table:
        window = table["window"]
        if not isinstance(window, str):
            raise fail("must be a window such as \"1d\" or \"6h\"", "serving.window")
        try:
            window_seconds(window)
        except Exception as error:
            raise fail(getattr(error, "message", str(error)), "serving.window") from None
        values["window"] = window
    if "retention_days" in table:
        days = table["retention_days"]
        if isinstance(days, bool) or not isinstance(days, int) or days < 1:
            raise fail("must be a whole number of days, at least 1", "serving.retention_days")
        values["retention_days"] = days
    if "quality_margin" in table:
        margin = table["quality_margin"]
        if isinstance(margin, bool) or not isinstance(margin, (int, float)) or margin < 0:
            raise fail("must be a number at least 0", "serving.quality_margin")
        values["quality_margin"] = float(margin)
    if "quality_metric" in table:
        if table["quality_metric"] not in METRICS:
            raise fail(f"must be one of {', '.join(METRICS)}", "serving.quality_metric")
        values["quality_metric"] = table["quality_metric"]
    if "confidence" in table:
        confidence = table["confidence"]
        if isinstance(confidence, bool) or not isinstance(confidence, (int, float)) or \
                not 0 < confidence < 1:
            raise fail("must lie strictly between 0 and 1", "serving.confidence")
        values["confidence"] = float(confidence)
    return dataclasses.replace(settings, **values)
