"""The SVG geometry: histograms from either stored form, category bars, the layered layout."""

from __future__ import annotations

import pytest

from registry.service.lineage import LineageEdge, LineageGraph, LineageNode
from web.graphics import category_chart, histogram_chart, layout


def test_histogram_with_edges_gives_one_bar_per_bin_scaled_to_the_tallest():
    chart = histogram_chart({"edges": [0, 1, 2, 4], "counts": [2, 8, 4]})
    assert [b.count for b in chart.bars] == [2, 8, 4]
    assert max(b.height for b in chart.bars) == chart.height
    assert chart.bars[0].label == "0 to 1" and chart.axis_right == "4"


def test_log_linear_buckets_are_read_with_their_value_ranges():
    # Index 1 + (bits(1.0) >> 48) is the bucket starting at 1.0 with 4 mantissa bits.
    one = 1 + (0x3FF0000000000000 >> 48)
    chart = histogram_chart({"mantissa_bits": 4, "buckets": [[one, 5], [-one, 2], [0, 1]]})
    assert [b.label for b in chart.bars] == ["-1.062 to -1", "0 to 0", "1 to 1.062"]
    assert [b.count for b in chart.bars] == [2, 1, 5]


@pytest.mark.parametrize("stored", [
    None, "text", {}, {"edges": [0, 1], "counts": [1, 2]}, {"edges": [0, "x"], "counts": [1]},
    {"edges": [0, 1], "counts": [-1]}, {"edges": [0, float("nan")], "counts": [1]},
    {"buckets": "x"}, {"mantissa_bits": 4, "buckets": [[1]]},
    {"mantissa_bits": 99, "buckets": [[1, 2]]}, {"mantissa_bits": 4, "buckets": [[10**30, 1]]},
])
def test_malformed_histograms_are_left_out_not_fatal(stored):
    assert histogram_chart(stored) is None


def test_category_bars_are_most_frequent_first_and_capped():
    chart = category_chart({f"v{i}": i for i in range(40)}, limit=5)
    assert [b.label for b in chart.bars] == ["v39", "v38", "v37", "v36", "v35"]
    assert "5 most frequent" in chart.caption
    assert category_chart({"a": "x"}) is None and category_chart([]) is None


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
    drawing = layout(graph)
    x = {p.node.id: p.x for p in drawing.nodes}
    assert x["dataset/a"] < x["dataset/b"] < x["model/m/version/1"] < x["model/m/version/2"] \
        < x["model/m/stage/live"]
    assert len(drawing.edges) == 4 and all(e.path.startswith("M") for e in drawing.edges)
    assert [heading for _, heading in drawing.columns] == ["datasets", "versions", "stages"]
