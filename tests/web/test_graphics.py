"""The geometry of the pictures: distributions with axes, drift overlays, lineage layout."""

from __future__ import annotations

import numpy as np

from registry.datasets.categories import CategoryCounts
from registry.datasets.histogram import bucket_indices, coarsen
from registry.datasets.profile import ColumnProfile, Moments
from registry.service.lineage import LineageEdge, LineageGraph, LineageNode
from registry.service.queries.distributions import distribution
from web.charts import picture
from web.graphics import crossings, label_lines, layout, middle_short


def _numeric(values: list[float], avro_type: str = "double") -> ColumnProfile:
    array = np.asarray(values, dtype=np.float64)
    indices = bucket_indices(array)
    histogram = coarsen_counts(indices)
    moments = Moments(len(values), float(array.mean()), float(((array - array.mean()) ** 2).sum()),
                      float(array.min()), float(array.max()))
    return ColumnProfile(avro_type=avro_type, count=len(values), moments=moments,
                         histogram=histogram)


def coarsen_counts(indices: np.ndarray):
    from registry.datasets.histogram import LogHistogram, MANTISSA_BITS

    unique, counts = np.unique(indices, return_counts=True)
    return coarsen(LogHistogram(MANTISSA_BITS, unique.astype(np.int64), counts.astype(np.int64)),
                   MANTISSA_BITS)


def _categories(counts: dict[str, int]) -> ColumnProfile:
    names = sorted(counts)
    return ColumnProfile(avro_type="string", count=sum(counts.values()),
                         categories=CategoryCounts(tuple(names), tuple(counts[n] for n in names),
                                                   True, sum(counts.values())))


def test_a_numeric_distribution_has_even_bins_that_hold_every_value():
    found = distribution(_numeric([1.0, 2.0, 2.5, 9.0, 10.0]))
    assert found.kind == "numeric" and len(found.edges) == len(found.reference) + 1
    assert found.edges[0] == 1.0 and found.edges[-1] == 10.0
    assert abs(sum(found.reference) - 1.0) < 1e-9 and found.reference[0] > 0


def test_small_integer_columns_get_one_bin_per_value():
    found = distribution(_numeric([0, 0, 1, 3], avro_type="int"))
    assert found.edges == (-0.5, 0.5, 1.5, 2.5, 3.5) and found.reference == (0.5, 0.25, 0.0, 0.25)
    drawn = picture(found)
    assert [t.label for t in drawn.x_ticks] == ["0", "1", "2", "3"]
    assert len(drawn.y_ticks) == 3 and drawn.y_ticks[-1].label == "50%"


def test_a_drift_overlay_puts_both_distributions_on_the_same_bins():
    found = distribution(_numeric([1.0, 2.0, 3.0]), _numeric([2.0, 3.0, 4.0, 5.0]))
    assert found.edges[0] == 1.0 and found.edges[-1] == 5.0
    assert len(found.reference) == len(found.current)
    drawn = picture(found)
    assert drawn.overlay and drawn.outline.startswith("M")
    assert {r.series for r in drawn.rects} == {"reference"}


def test_categories_are_named_rows_most_frequent_first_with_the_rest_as_other():
    counts = {f"c{i:02d}": 100 - i for i in range(15)}
    found = distribution(_categories(counts))
    assert found.labels[:2] == ("c00", "c01") and found.labels[-1] == "other"
    assert len(found.labels) == 13
    drawn = picture(found)
    assert [t.label for t in drawn.row_labels] == list(found.labels)


def test_long_labels_wrap_at_a_hyphen_or_shorten_in_the_middle():
    assert label_lines("brackwater-telemetry-extract-for-the-whole-year") == (
        "brackwater-telemetry-", "extract-for-the-whole-year")
    assert label_lines("short") == ("short",)
    shortened = middle_short("a" * 20 + "b" * 20, 11)
    assert shortened == "aaaaa…bbbbb" and len(shortened) == 11


def _node(node_id: str, kind: str) -> LineageNode:
    return LineageNode(id=node_id, kind=kind, label=node_id, recalled=False, flagged=False,
                       depth=None)


def test_layout_puts_datasets_then_versions_then_stages_left_to_right():
    graph = LineageGraph(root="dataset/a", direction="down", depth=None, nodes=(
        _node("dataset/a", "dataset"), _node("dataset/b", "dataset"),
        _node("model/m/version/1", "version"), _node("model/m/version/2", "version"),
        _node("model/m/stage/live", "stage")), edges=(
        LineageEdge("dataset/b", "dataset/a", "derived-from"),
        LineageEdge("model/m/version/1", "dataset/b", "trained-on"),
        LineageEdge("model/m/version/2", "model/m/version/1", "parent-version"),
        LineageEdge("model/m/stage/live", "model/m/version/2", "held-by")))
    drawing = layout(graph, {"model/m/version/2": ("live",)})
    x = {p.node.id: p.x for p in drawing.nodes}
    assert x["dataset/a"] < x["dataset/b"] < x["model/m/version/1"] < x["model/m/version/2"] \
        < x["model/m/stage/live"]
    assert len(drawing.edges) == 4 and all(e.path.startswith("M") for e in drawing.edges)
    assert [heading for _, heading in drawing.columns] == ["datasets", "versions", "stages"]
    detail = {p.node.id: p.detail for p in drawing.nodes}
    assert detail["model/m/version/2"] == "version · holds live"
    assert drawing.relations == ("derived-from", "trained-on", "parent-version", "held-by")


def test_barycentre_ordering_untangles_two_parallel_chains():
    # Names sort against the chains: a naive alphabetical order crosses every edge.
    graph = LineageGraph(root="dataset/a", direction="both", depth=None, nodes=(
        _node("dataset/a", "dataset"), _node("dataset/b", "dataset"),
        _node("model/m/version/1", "version"), _node("model/m/version/2", "version"),
        _node("model/m/stage/live", "stage"), _node("model/m/stage/shadow", "stage")), edges=(
        LineageEdge("model/m/version/2", "dataset/a", "trained-on"),
        LineageEdge("model/m/version/1", "dataset/b", "trained-on"),
        LineageEdge("model/m/stage/shadow", "model/m/version/2", "held-by"),
        LineageEdge("model/m/stage/live", "model/m/version/1", "held-by")))
    assert crossings(layout(graph)) == 0


def test_axis_ticks_fall_on_round_values_within_the_range():
    from web.charts import round_ticks

    assert round_ticks(220.6, 723.6) == (300.0, 400.0, 500.0, 600.0, 700.0)
    assert round_ticks(-15.5, 13.2) == (-15.0, -10.0, -5.0, 0.0, 5.0, 10.0)
    assert round_ticks(0.0, 1.0) == (0.0, 0.25, 0.5, 0.75, 1.0)


def _fewest_crossings(graph: LineageGraph) -> int:
    """The fewest crossings any ordering of the columns allows, by trying every ordering."""
    from itertools import permutations, product

    from web.graphics import _levels

    columns = _levels(graph)
    members: dict[int, list[str]] = {}
    for node, column in columns.items():
        members.setdefault(column, []).append(node)
    # Every edge between two columns, adjacent or not, as `crossings` counts a drawing: the
    # demo's feed column puts the trained-on and evaluated-on edges two columns apart.
    adjacent = [(e.target, e.source) for e in graph.edges
                if columns[e.source] != columns[e.target]]
    best = None
    for orders in product(*(permutations(members[c]) for c in sorted(members))):
        position = {node: i for order in orders for i, node in enumerate(order)}
        count = sum(1 for i, (a1, b1) in enumerate(adjacent) for a2, b2 in adjacent[i + 1:]
                    if columns[a1] == columns[a2] and columns[b1] == columns[b2]
                    and (position[a1] - position[a2]) * (position[b1] - position[b2]) < 0)
        best = count if best is None else min(best, count)
    return best or 0


def test_the_demo_lineage_pictures_cross_no_more_than_they_must(demo_url):
    from registry.service.queries import lineage_page
    from registry.store.catalogue import open_catalogue

    catalogue = open_catalogue(demo_url)
    try:
        for node, direction in (("dataset/brackwater-telemetry-extract", "both"),
                                ("model/main-burst-risk/version/2", "up"),
                                ("model/night-flow-leak/stage/live", "up"),
                                ("dataset/brackwater-asset-register", "down")):
            graph = lineage_page(catalogue, node, direction, 4).graph
            assert crossings(layout(graph)) == _fewest_crossings(graph), node
    finally:
        catalogue.close()
