"""Geometry for the server-drawn SVG: the layered lineage graph and profile histograms.

Pure functions from plain data to boxes, paths and bars; the templates turn them into SVG, so
every label passes through Jinja's autoescaping.
"""

from __future__ import annotations

import math
import struct
from dataclasses import dataclass
from typing import Any

from registry.service.lineage import LineageGraph, LineageNode

NODE_WIDTH = 206
NODE_HEIGHT = 44
COLUMN_GAP = 70
ROW_GAP = 18
MARGIN = 16
ARC_ROOM = 44


@dataclass(frozen=True)
class PlacedNode:
    node: LineageNode
    x: float
    y: float
    width: float
    height: float
    lines: tuple[str, ...]
    is_root: bool


@dataclass(frozen=True)
class PlacedEdge:
    path: str
    relation: str
    title: str


@dataclass(frozen=True)
class GraphDrawing:
    width: float
    height: float
    nodes: tuple[PlacedNode, ...]
    edges: tuple[PlacedEdge, ...]
    columns: tuple[tuple[float, str], ...]  # x and heading of each kind's first column


def _short(text: str, limit: int = 26) -> str:
    return text if len(text) <= limit else text[:limit - 1] + "…"


def _levels(graph: LineageGraph) -> dict[str, int]:
    """Column of each node: datasets by derived-from depth, then versions, then stages."""
    kind_of = {n.id: n.kind for n in graph.nodes}
    depends: dict[str, list[str]] = {n.id: [] for n in graph.nodes}
    for edge in graph.edges:
        if edge.source in depends and edge.target in depends:
            depends[edge.source].append(edge.target)
    level: dict[str, int] = {}

    def settle(node: str, seen: frozenset[str]) -> int:
        if node in level:
            return level[node]
        within = [d for d in depends[node] if kind_of[d] == kind_of[node] and d not in seen]
        level[node] = 1 + max((settle(d, seen | {node}) for d in within), default=-1)
        return level[node]

    for node in depends:
        settle(node, frozenset())
    offset, columns = 0, {}
    for kind in ("dataset", "version", "stage"):
        members = [n for n in level if kind_of[n] == kind]
        if not members:
            continue
        width = max(level[n] for n in members) + 1
        for n in members:
            columns[n] = offset + level[n]
        offset += width
    return columns


def layout(graph: LineageGraph) -> GraphDrawing:
    columns = _levels(graph)
    by_column: dict[int, list[LineageNode]] = {}
    for node in graph.nodes:
        by_column.setdefault(columns[node.id], []).append(node)
    placed: dict[str, PlacedNode] = {}
    tallest = max((len(v) for v in by_column.values()), default=1)
    # Edges that skip a column arc over the nodes between, through a corridor above them.
    skips = any(columns[e.source] - columns[e.target] > 1 for e in graph.edges
                if e.source in columns and e.target in columns)
    corridor = ARC_ROOM if skips else 0
    height = 2 * MARGIN + tallest * NODE_HEIGHT + (tallest - 1) * ROW_GAP + 20 + corridor
    headings: dict[str, float] = {}
    for column, members in sorted(by_column.items()):
        x = MARGIN + column * (NODE_WIDTH + COLUMN_GAP)
        members.sort(key=lambda n: n.label)
        used = len(members) * NODE_HEIGHT + (len(members) - 1) * ROW_GAP
        top = MARGIN + 20 + corridor + (height - 2 * MARGIN - 20 - corridor - used) / 2
        for index, node in enumerate(members):
            headings.setdefault(node.kind, x)
            marks = [word for word, on in (("RECALLED", node.recalled),
                                           ("flagged", node.flagged and not node.recalled),
                                           ("formerly held", node.kind == "stage"
                                            and not node.current)) if on]
            lines = (_short(node.label), _short(" · ".join([node.kind] + marks), 30))
            placed[node.id] = PlacedNode(node, x, top + index * (NODE_HEIGHT + ROW_GAP),
                                         NODE_WIDTH, NODE_HEIGHT, lines, node.id == graph.root)
    edges = []
    for edge in graph.edges:
        # Drawn from the upstream end (target) on the left to the dependent (source) on the right.
        start, end = placed.get(edge.target), placed.get(edge.source)
        if start is None or end is None:
            continue
        x1, y1 = start.x + start.width, start.y + start.height / 2
        x2, y2 = end.x, end.y + end.height / 2
        if x2 <= x1:  # same column (should not happen for a layered graph): bow outwards
            x2, y2 = end.x + end.width, y2
            bend = COLUMN_GAP / 2 + 20
            path = (f"M{x1:.1f},{y1:.1f} C{x1 + bend:.1f},{y1:.1f} "
                    f"{x2 + bend:.1f},{y2:.1f} {x2:.1f},{y2:.1f}")
        elif columns[edge.source] - columns[edge.target] > 1:
            lift = MARGIN + 22
            path = (f"M{x1:.1f},{y1:.1f} C{x1 + COLUMN_GAP:.1f},{lift:.1f} "
                    f"{x2 - COLUMN_GAP:.1f},{lift:.1f} {x2 - 6:.1f},{y2:.1f}")
        else:
            middle = (x1 + x2) / 2
            path = (f"M{x1:.1f},{y1:.1f} C{middle:.1f},{y1:.1f} "
                    f"{middle:.1f},{y2:.1f} {x2 - 6:.1f},{y2:.1f}")
        edges.append(PlacedEdge(path, edge.relation,
                                f"{edge.source} {edge.relation} {edge.target}"))
    column_count = max(columns.values(), default=0) + 1
    width = 2 * MARGIN + column_count * (NODE_WIDTH + COLUMN_GAP) - COLUMN_GAP
    heading_names = {"dataset": "datasets", "version": "versions", "stage": "stages"}
    return GraphDrawing(width, height, tuple(placed.values()), tuple(edges),
                        tuple((x, heading_names[k]) for k, x in headings.items()))


@dataclass(frozen=True)
class Bar:
    x: float
    y: float
    width: float
    height: float
    label: str  # what the bar counts, for its tooltip and the table beside the chart
    count: int


@dataclass(frozen=True)
class Chart:
    width: float
    height: float
    bars: tuple[Bar, ...]
    axis_left: str
    axis_right: str
    caption: str


CHART_WIDTH, CHART_HEIGHT = 320, 120


def _finite(value: Any) -> bool:
    return isinstance(value, (int, float)) and not isinstance(value, bool) and math.isfinite(value)


def _bars(labels: list[str], counts: list[int]) -> tuple[Bar, ...]:
    peak = max(counts, default=0) or 1
    slot = CHART_WIDTH / max(len(counts), 1)
    return tuple(Bar(i * slot + 1, CHART_HEIGHT - CHART_HEIGHT * c / peak, max(slot - 2, 1),
                     CHART_HEIGHT * c / peak, label, c)
                 for i, (label, c) in enumerate(zip(labels, counts, strict=False)))


def _format(value: float) -> str:
    return f"{value:.4g}"


MAX_BARS = 40


def _bucket_bounds(index: int, mantissa_bits: int) -> tuple[float, float]:
    """Value range of a signed log-linear bucket: index sign(x) * (1 + (bits(|x|) >> (52 - m))),
    as the dataset profile stores it (registry.datasets.histogram)."""
    if index == 0:
        return 0.0, 0.0
    shift = 52 - mantissa_bits
    magnitude = abs(index) - 1
    low = struct.unpack("<d", struct.pack("<Q", magnitude << shift))[0]
    top = min((magnitude + 1) << shift, 0x7FEFFFFFFFFFFFFF)  # at most the largest double
    high = struct.unpack("<d", struct.pack("<Q", top))[0]
    return (low, high) if index > 0 else (-high, -low)


def _log_buckets(histogram: dict) -> Chart | None:
    bits, buckets = histogram.get("mantissa_bits"), histogram.get("buckets")
    if (not isinstance(bits, int) or not 0 <= bits <= 52 or not isinstance(buckets, list)
            or not buckets or len(buckets) > 100_000):
        return None
    ranges = []
    for pair in buckets:
        if (not isinstance(pair, list) or len(pair) != 2
                or not all(isinstance(v, int) and not isinstance(v, bool) for v in pair)
                or pair[1] < 0 or abs(pair[0]) > (1 << (64 - 52 + bits))):
            return None
        low, high = _bucket_bounds(pair[0], bits)
        if not (math.isfinite(low) and math.isfinite(high)):
            return None
        ranges.append((low, high, pair[1]))
    ranges.sort()
    size = math.ceil(len(ranges) / MAX_BARS)
    groups = [ranges[i:i + size] for i in range(0, len(ranges), size)]
    labels = [f"{_format(g[0][0])} to {_format(g[-1][1])}" for g in groups]
    counts = [sum(c for _, _, c in g) for g in groups]
    return Chart(CHART_WIDTH, CHART_HEIGHT, _bars(labels, counts), _format(ranges[0][0]),
                 _format(ranges[-1][1]),
                 f"{sum(counts)} values in {len(ranges)} log-spaced buckets"
                 + (f", shown as {len(groups)} bars" if size > 1 else ""))


def histogram_chart(histogram: Any) -> Chart | None:
    """Bars for a stored histogram, {edges, counts} or log-linear {mantissa_bits, buckets};
    None when it is absent or malformed."""
    if not isinstance(histogram, dict):
        return None
    if "buckets" in histogram:
        return _log_buckets(histogram)
    edges, counts = histogram.get("edges"), histogram.get("counts")
    if (not isinstance(edges, list) or not isinstance(counts, list) or not counts
            or len(edges) != len(counts) + 1 or not all(_finite(e) for e in edges)
            or not all(isinstance(c, int) and not isinstance(c, bool) and c >= 0 for c in counts)
            or len(counts) > 1000):
        return None
    labels = [f"{_format(edges[i])} to {_format(edges[i + 1])}" for i in range(len(counts))]
    return Chart(CHART_WIDTH, CHART_HEIGHT, _bars(labels, counts), _format(edges[0]),
                 _format(edges[-1]), f"{sum(counts)} values in {len(counts)} bins")


def category_chart(counts: Any, limit: int = 30) -> Chart | None:
    """Bars for category or enum symbol counts {value: count}."""
    if not isinstance(counts, dict) or not counts:
        return None
    pairs = [(str(k), v) for k, v in counts.items()
             if isinstance(v, int) and not isinstance(v, bool) and v >= 0]
    if not pairs:
        return None
    pairs.sort(key=lambda p: -p[1])
    shown = pairs[:limit]
    caption = f"{len(pairs)} values"
    if len(pairs) > limit:
        caption += f", the {limit} most frequent shown"
    return Chart(CHART_WIDTH, CHART_HEIGHT, _bars([k for k, _ in shown], [v for _, v in shown]),
                 "", "", caption)
