"""The version page's view of what changes if a version enters a stage: the impact document of
registry.service.impact, and a picture of the metric and slice intervals against zero."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

LABEL_WIDTH = 190
PLOT_WIDTH = 420
ROW_HEIGHT = 24
TOP = 24


@dataclass(frozen=True)
class IntervalRow:
    label: str
    moves: str  # better | worse | steady | not compared
    x_low: float
    x_high: float
    x_point: float
    y: float
    text: str  # the numbers, for the tooltip and the table beside the chart


@dataclass(frozen=True)
class IntervalChart:
    width: float
    height: float
    zero_x: float
    rows: tuple[IntervalRow, ...]
    span: float  # the largest absolute value drawn: the axis runs from -span to +span
    half_width: float = PLOT_WIDTH / 2  # from zero to either end of the axis


def interval_chart(metrics: list[dict[str, Any]], slices: list[dict[str, Any]]
                   ) -> IntervalChart | None:
    """Each difference with its interval on one symmetric axis around zero."""
    entries = [(m["metric"], m) for m in metrics if m["moves"] != "not compared"]
    entries += [(f"{s['column']}={s['value']} {s['metric']}", s) for s in slices]
    if not entries:
        return None
    span = max(max(abs(e["ci_low"]), abs(e["ci_high"]), abs(e["difference"]))
               for _, e in entries) or 1.0
    span *= 1.1
    zero = LABEL_WIDTH + PLOT_WIDTH / 2

    def x(value: float) -> float:
        return zero + value / span * (PLOT_WIDTH / 2)

    rows = tuple(IntervalRow(label=label, moves=entry["moves"], x_low=x(entry["ci_low"]),
                             x_high=x(entry["ci_high"]), x_point=x(entry["difference"]),
                             y=TOP + index * ROW_HEIGHT + ROW_HEIGHT / 2,
                             text=f"{label}: {entry['difference']:+.4f} "
                                  f"[{entry['ci_low']:+.4f}, {entry['ci_high']:+.4f}], "
                                  f"{entry['moves']}")
                 for index, (label, entry) in enumerate(entries))
    return IntervalChart(width=LABEL_WIDTH + PLOT_WIDTH + 20,
                         height=TOP + len(rows) * ROW_HEIGHT + 24, zero_x=zero, rows=rows,
                         span=span)
