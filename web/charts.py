"""Geometry of the data pictures: a column's distribution with axes and tick labels, categories
as named rows, and drift as a reference and a current distribution drawn over each other
(reference as grey bars, current as an outline, so the two differ in shape, not only colour)."""

from __future__ import annotations

import math
from dataclasses import dataclass

from registry.service.queries.distributions import Distribution
from registry.service.queries.reports import plain_number

WIDTH = 380
PLOT_HEIGHT = 130
LEFT, RIGHT, TOP, BOTTOM = 46, 20, 10, 34
ROW = 18
LABEL_ROOM = 130
X_TICKS = 5


@dataclass(frozen=True)
class Rect:
    x: float
    y: float
    width: float
    height: float
    series: str  # single | reference | current
    title: str


@dataclass(frozen=True)
class Tick:
    at: float
    label: str


@dataclass(frozen=True)
class Picture:
    width: float
    height: float
    orientation: str  # columns (a numeric axis) | rows (one row per category)
    left: float
    top: float
    right: float
    bottom: float
    rects: tuple[Rect, ...]
    outline: str  # the current distribution as a step outline, in overlays of numbers
    x_ticks: tuple[Tick, ...]
    y_ticks: tuple[Tick, ...]
    row_labels: tuple[Tick, ...]  # category names, at the middle of their row
    overlay: bool


def round_ticks(low: float, high: float, wanted: int = X_TICKS) -> tuple[float, ...]:
    """Round values (1, 2, 2.5 or 5 times a power of ten apart) spanning low to high."""
    span = high - low
    if span <= 0:
        return (low,)
    power = 10 ** math.floor(math.log10(span / (wanted - 1)))

    def ticks(step: float) -> tuple[float, ...]:
        first = math.ceil(low / step - 1e-9) * step
        count = int(math.floor((high - first) / step + 1e-9)) + 1
        return tuple(float(f"{first + i * step:.10g}") for i in range(count))

    candidates = [ticks(m * power) for m in (1, 2, 2.5, 5, 10)]
    return min(candidates, key=lambda found: (abs(len(found) - wanted), len(found)))


def _percent(share: float) -> str:
    return f"{share * 100:.0f}%" if share >= 0.1 or share == 0 else f"{share * 100:.1f}%"


def _edge_label(value: float, integer: bool) -> str:
    return str(int(round(value + 0.5))) if integer and value % 1 else plain_number(
        round(value, 10))


def _columns(d: Distribution) -> Picture:
    overlay = bool(d.current)
    width, height = WIDTH, TOP + PLOT_HEIGHT + BOTTOM
    left, right, top, bottom = LEFT, WIDTH - RIGHT, TOP, TOP + PLOT_HEIGHT
    peak = max([*d.reference, *d.current, 1e-9])
    span = d.edges[-1] - d.edges[0] or 1.0

    def x(value: float) -> float:
        return left + (value - d.edges[0]) / span * (right - left)

    def y(share: float) -> float:
        return bottom - share / peak * (bottom - top)

    rects = []
    for i, share in enumerate(d.reference):
        low, high = d.edges[i], d.edges[i + 1]
        what = f"{_edge_label(low, d.integer)} to {_edge_label(high, d.integer)}"
        if d.integer and high - low == 1:
            what = _edge_label(low, True)
        title = (f"{what}: reference {_percent(share)}, current {_percent(d.current[i])}"
                 if overlay else f"{what}: {_percent(share)} of values")
        rects.append(Rect(x(low) + 0.5, y(share), max(x(high) - x(low) - 1, 1),
                          bottom - y(share), "reference" if overlay else "single", title))
    outline = ""
    if overlay:
        points = [f"M{x(d.edges[0]):.1f},{bottom:.1f}"]
        for i, share in enumerate(d.current):
            points += [f"L{x(d.edges[i]):.1f},{y(share):.1f}",
                       f"L{x(d.edges[i + 1]):.1f},{y(share):.1f}"]
        points.append(f"L{x(d.edges[-1]):.1f},{bottom:.1f}")
        outline = " ".join(points)
    if d.integer and all(high - low == 1 for low, high in zip(d.edges, d.edges[1:], strict=False)):
        every = -(-(len(d.edges) - 1) // (2 * X_TICKS))  # at most ten labelled values
        x_ticks = tuple(Tick(x(d.edges[i] + 0.5), _edge_label(d.edges[i], True))
                        for i in range(0, len(d.edges) - 1, every))
    else:
        x_ticks = tuple(Tick(x(value), plain_number(value))
                        for value in round_ticks(d.edges[0], d.edges[-1]))
    y_ticks = (Tick(bottom, "0%"), Tick(y(peak / 2), _percent(peak / 2)), Tick(top, _percent(peak)))
    return Picture(width, height, "columns", left, top, right, bottom, tuple(rects), outline,
                   x_ticks, y_ticks, (), overlay)


def _rows(d: Distribution) -> Picture:
    overlay = bool(d.current)
    per_row = ROW * (1.6 if overlay else 1)
    left, right, top = LABEL_ROOM, WIDTH - 44, TOP
    bottom = top + per_row * len(d.labels)
    peak = max([*d.reference, *d.current, 1e-9])
    rects, labels = [], []
    for i, name in enumerate(d.labels):
        row_top = top + i * per_row
        labels.append(Tick(row_top + per_row / 2, name))
        shares = [("reference" if overlay else "single", d.reference[i])]
        if overlay:
            shares.append(("current", d.current[i]))
        band = (per_row - 4) / len(shares)
        for j, (series, share) in enumerate(shares):
            title = (f"{name}: reference {_percent(d.reference[i])}, current "
                     f"{_percent(d.current[i])}" if overlay else f"{name}: {_percent(share)}")
            rects.append(Rect(left, row_top + 2 + j * band, max(share / peak * (right - left), 1),
                              band - 1, series, title))
    x_ticks = (Tick(left, "0%"), Tick((left + right) / 2, _percent(peak / 2)),
               Tick(right, _percent(peak)))
    return Picture(WIDTH, bottom + 24, "rows", left, top, right, bottom, tuple(rects), "",
                   x_ticks, (), tuple(labels), overlay)


def picture(distribution: Distribution | None) -> Picture | None:
    if distribution is None or not distribution.reference:
        return None
    return _columns(distribution) if distribution.kind == "numeric" else _rows(distribution)
