"""Geometry of the lineage picture: layered columns (datasets, then versions, then stages),
each column ordered by the barycentre of its neighbours so the demo's graphs draw without
crossings, full labels wrapped over two lines (or shortened in the middle, the whole name in
a tooltip), and version boxes naming the stages they hold.

Pure functions from plain data to boxes and paths; the templates turn them into SVG, so every
label passes through Jinja's autoescaping.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from itertools import permutations

from registry.service.lineage import LineageGraph, LineageNode

NODE_WIDTH = 232
NODE_HEIGHT = 58
COLUMN_GAP = 64
ROW_GAP = 16
MARGIN = 16
HEADING = 22
ARC_ROOM = 40
LINE_CHARACTERS = 30  # what fits on one line of a box at the label's size
SWEEPS = 4
EXACT_COLUMN = 6  # columns this small try every order of their nodes
RELATIONS = ("derived-from", "built-from", "trained-on", "evaluated-on", "reads-feed",
             "parent-version", "held-by", "was-held-by", "reads-output-of")


@dataclass(frozen=True)
class PlacedNode:
    node: LineageNode
    x: float
    y: float
    width: float
    height: float
    lines: tuple[str, ...]  # the label, over one or two lines
    detail: str  # kind, and what it holds or is flagged for
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
    relations: tuple[str, ...]  # the edge kinds drawn, for the legend


def middle_short(text: str, limit: int = LINE_CHARACTERS) -> str:
    """Text cut in the middle, so both the start and the distinguishing end stay visible."""
    if len(text) <= limit:
        return text
    keep = limit - 1
    return text[:(keep + 1) // 2] + "…" + text[len(text) - keep // 2:]


def label_lines(text: str, limit: int = LINE_CHARACTERS) -> tuple[str, ...]:
    """One line when it fits; else two, broken after a hyphen or space near the middle."""
    if len(text) <= limit:
        return (text,)
    breaks = [i + 1 for i, c in enumerate(text) if c in "- " and i + 1 <= limit]
    if breaks:
        cut = min(breaks, key=lambda i: abs(i - len(text) / 2))
        if len(text) - cut <= limit:
            return text[:cut].rstrip(), text[cut:].lstrip()
        return text[:cut].rstrip(), middle_short(text[cut:].lstrip(), limit)
    return (middle_short(text, limit),)


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
    for kind in ("dataset", "feed", "version", "stage", "consumer"):
        members = [n for n in level if kind_of[n] == kind]
        if not members:
            continue
        width = max(level[n] for n in members) + 1
        for n in members:
            columns[n] = offset + level[n]
        offset += width
    return columns


def _ordered(graph: LineageGraph, columns: dict[str, int]) -> dict[int, list[LineageNode]]:
    """Barycentre ordering (Sugiyama, Tagawa and Toda 1981): sweep right then left, placing each
    node at the mean position of its neighbours in the column just swept."""
    by_column: dict[int, list[LineageNode]] = {}
    for node in sorted(graph.nodes, key=lambda n: n.label):
        by_column.setdefault(columns[node.id], []).append(node)
    neighbours: dict[str, list[str]] = {n.id: [] for n in graph.nodes}
    for edge in graph.edges:
        if edge.source in neighbours and edge.target in neighbours:
            neighbours[edge.source].append(edge.target)
            neighbours[edge.target].append(edge.source)
    order = sorted(by_column)
    for sweep in range(SWEEPS):
        position = {n.id: i for members in by_column.values() for i, n in enumerate(members)}
        for column in (order[1:] if sweep % 2 == 0 else list(reversed(order))[1:]):
            members = by_column[column]

            def centre(node: LineageNode, members: list[LineageNode] = members,
                       position: dict[str, int] = position, column: int = column) -> float:
                near = [position[m] for m in neighbours[node.id]
                        if columns[m] != column and m in position]
                return sum(near) / len(near) if near else members.index(node)

            members.sort(key=lambda n: (centre(n), n.label))
            position.update({n.id: i for i, n in enumerate(members)})
    _switch_neighbours(by_column, graph, columns)
    return by_column


def _switch_neighbours(by_column: dict[int, list[LineageNode]], graph: LineageGraph,
                       columns: dict[str, int]) -> None:
    """Refine the sweeps: reorder one column at a time to the order with the fewest crossings
    (edges between the same two columns), the others held still, until no column improves. Small
    columns try every order (one-sided crossing minimisation, exact for up to EXACT_COLUMN nodes),
    larger ones swap neighbours greedily (Eades and Kelly 1986). Barycentres alone leave crossings
    where a node's neighbours pull both ways (a feed read by several versions, say)."""
    links = [(e.source, e.target) for e in graph.edges
             if e.source in columns and e.target in columns
             and columns[e.source] != columns[e.target]]

    def count() -> int:
        position = {n.id: i for members in by_column.values() for i, n in enumerate(members)}
        # As `crossings` measures a drawing: edges between the same two columns that cross.
        ends = [((columns[a], position[a]), (columns[b], position[b])) for a, b in links]
        return sum(1 for i, (s1, e1) in enumerate(ends) for s2, e2 in ends[i + 1:]
                   if s1[0] == s2[0] and e1[0] == e2[0] and (s1[1] - s2[1]) * (e1[1] - e2[1]) < 0)

    best = count()
    for _ in range(SWEEPS):
        before = best
        for column in sorted(by_column):
            members = by_column[column]
            candidates = (permutations(members) if len(members) <= EXACT_COLUMN else
                          (members[:i] + [members[i + 1], members[i]] + members[i + 2:]
                           for i in range(len(members) - 1)))
            kept = list(members)
            for order in candidates:
                members[:] = order
                now = count()
                if now < best:
                    best, kept = now, list(order)
            members[:] = kept
        if best == 0 or best == before:
            return


def _detail(node: LineageNode, held: Mapping[str, tuple[str, ...]]) -> str:
    words = [node.kind]
    if node.kind == "version" and held.get(node.id):
        words.append("holds " + ", ".join(held[node.id]))
    if node.kind == "stage" and not node.current:
        words.append("held formerly")
    if node.recalled:
        words.append("RECALLED")
    elif node.flagged:
        words.append("flagged")
    return " · ".join(words)


def _edge_path(start: PlacedNode, end: PlacedNode, skips: bool) -> str:
    x1, y1 = start.x + start.width, start.y + start.height / 2
    x2, y2 = end.x, end.y + end.height / 2
    if x2 <= x1:  # same column: bow outwards on the right
        x2, bend = end.x + end.width, COLUMN_GAP / 2 + 20
        return (f"M{x1:.1f},{y1:.1f} C{x1 + bend:.1f},{y1:.1f} "
                f"{x2 + bend:.1f},{y2:.1f} {x2:.1f},{y2:.1f}")
    if skips:  # over the columns between, through the corridor above them
        lift = MARGIN + HEADING + 8
        return (f"M{x1:.1f},{y1:.1f} C{x1 + COLUMN_GAP:.1f},{lift:.1f} "
                f"{x2 - COLUMN_GAP:.1f},{lift:.1f} {x2 - 6:.1f},{y2:.1f}")
    middle = (x1 + x2) / 2
    return (f"M{x1:.1f},{y1:.1f} C{middle:.1f},{y1:.1f} "
            f"{middle:.1f},{y2:.1f} {x2 - 6:.1f},{y2:.1f}")


def layout(graph: LineageGraph, held: Mapping[str, tuple[str, ...]] | None = None
           ) -> GraphDrawing:
    held = held or {}
    columns = _levels(graph)
    by_column = _ordered(graph, columns)
    tallest = max((len(v) for v in by_column.values()), default=1)
    skipping = [e for e in graph.edges if e.source in columns and e.target in columns
                and columns[e.source] - columns[e.target] > 1]
    corridor = ARC_ROOM if skipping else 0
    top_room = MARGIN + HEADING + corridor
    height = top_room + tallest * NODE_HEIGHT + (tallest - 1) * ROW_GAP + MARGIN
    placed: dict[str, PlacedNode] = {}
    headings: dict[str, float] = {}
    for column, members in sorted(by_column.items()):
        x = MARGIN + column * (NODE_WIDTH + COLUMN_GAP)
        used = len(members) * NODE_HEIGHT + (len(members) - 1) * ROW_GAP
        top = top_room + (height - top_room - MARGIN - used) / 2
        for index, node in enumerate(members):
            headings.setdefault(node.kind, x)
            placed[node.id] = PlacedNode(node, x, top + index * (NODE_HEIGHT + ROW_GAP),
                                         NODE_WIDTH, NODE_HEIGHT, label_lines(node.label),
                                         middle_short(_detail(node, held), 36),
                                         node.id == graph.root)
    edges = []
    for edge in graph.edges:
        # Drawn from the upstream end (target) on the left to the dependent (source) on the right.
        start, end = placed.get(edge.target), placed.get(edge.source)
        if start is None or end is None:
            continue
        edges.append(PlacedEdge(_edge_path(start, end, edge in skipping), edge.relation,
                                f"{edge.source} {edge.relation} {edge.target}"))
    column_count = max(columns.values(), default=0) + 1
    width = 2 * MARGIN + column_count * (NODE_WIDTH + COLUMN_GAP) - COLUMN_GAP
    heading_names = {"dataset": "datasets", "feed": "feeds", "version": "versions",
                     "stage": "stages", "consumer": "consumers"}
    drawn = {e.relation for e in edges}
    return GraphDrawing(width, height, tuple(placed.values()), tuple(edges),
                        tuple((x, heading_names[k]) for k, x in headings.items()),
                        tuple(r for r in RELATIONS if r in drawn))


def crossings(drawing: GraphDrawing) -> int:
    """Pairs of edges between the same two adjacent columns that cross: the layout's measure."""
    ends = []
    for edge in drawing.edges:
        numbers = [float(v) for v in edge.path.replace("M", " ").replace("C", " ")
                   .replace(",", " ").split()]
        ends.append((numbers[0], numbers[1], numbers[-2], numbers[-1]))
    count = 0
    for i, (ax1, ay1, ax2, ay2) in enumerate(ends):
        for bx1, by1, bx2, by2 in ends[i + 1:]:
            if abs(ax1 - bx1) < 1 and abs(ax2 - bx2) < 1 and (ay1 - by1) * (ay2 - by2) < 0:
                count += 1
    return count
