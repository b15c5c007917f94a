"""The mergeable summary of what one version served in one window.

Rows, the time span, the datasets package's column profiles of the input fields (counts,
moments, histogram, category counts) and of the prediction columns. Every part merges with the
same part of another window or batch, so a week is the merge of its days and a day the merge of
its batches, in any order.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

from registry.datasets.profile import ColumnProfile, merge_profiles


@dataclass(frozen=True)
class WindowSummary:
    task: str
    rows: int = 0
    first_served_at: int | None = None  # microseconds since the epoch
    last_served_at: int | None = None
    inputs: Mapping[str, ColumnProfile] = field(default_factory=dict)
    predictions: Mapping[str, ColumnProfile] = field(default_factory=dict)

    def to_dict(self) -> dict[str, Any]:
        return {"task": self.task, "rows": self.rows, "first_served_at": self.first_served_at,
                "last_served_at": self.last_served_at,
                "inputs": {name: p.to_dict() for name, p in self.inputs.items()},
                "predictions": {name: p.to_dict() for name, p in self.predictions.items()}}

    @classmethod
    def from_dict(cls, data: Mapping[str, Any]) -> WindowSummary:
        return cls(task=data["task"], rows=int(data["rows"]),
                   first_served_at=data.get("first_served_at"),
                   last_served_at=data.get("last_served_at"),
                   inputs={n: ColumnProfile.from_dict(p) for n, p in data["inputs"].items()},
                   predictions={n: ColumnProfile.from_dict(p)
                                for n, p in data["predictions"].items()})


def _merge_columns(a: Mapping[str, ColumnProfile],
                   b: Mapping[str, ColumnProfile]) -> dict[str, ColumnProfile]:
    merged = dict(a)
    for name, profile in b.items():
        merged[name] = merge_profiles(merged[name], profile) if name in merged else profile
    return merged


def _earliest(a: int | None, b: int | None) -> int | None:
    return b if a is None else a if b is None else min(a, b)


def _latest(a: int | None, b: int | None) -> int | None:
    return b if a is None else a if b is None else max(a, b)


def merge_summaries(a: WindowSummary, b: WindowSummary) -> WindowSummary:
    return WindowSummary(task=a.task, rows=a.rows + b.rows,
                         first_served_at=_earliest(a.first_served_at, b.first_served_at),
                         last_served_at=_latest(a.last_served_at, b.last_served_at),
                         inputs=_merge_columns(a.inputs, b.inputs),
                         predictions=_merge_columns(a.predictions, b.predictions))
