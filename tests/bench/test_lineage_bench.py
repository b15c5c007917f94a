"""Benchmark: the downstream set of a root in a 100,000-node, 300,000-edge catalogue on SQLite.

Issue 9 asks for under 200 ms and the same answer as networkx.descendants on the same graph;
the networkx walk over the in-memory graph is the reference timed in the same run.
Run with `python -m pytest tests/bench/test_lineage_bench.py -s`.
"""

from __future__ import annotations

import time
from datetime import UTC, datetime

import networkx
import numpy as np
import pytest
from sqlalchemy import insert

from registry.store import lineage as walks
from registry.store import tables as t
from registry.store.catalogue import open_catalogue
from registry.store.unit_of_work import UnitOfWork
from tests.conftest import run_cli

DATASETS = 80_000
VERSIONS = 20_000
EDGES = 300_000
FAMILIES = 8  # separate lines of data, so a root's downstream set is a part of the graph
# Versions spread over model lines of 100 versions each. A downstream step from a version to
# the versions naming it as parent reads its model's versions (the catalogue has no index on
# (model_id, parent_number)), so this step costs the length of a model line per version.
MODELS = 200
LIMIT_SECONDS = 0.200


def _generate(seed: int = 9):
    generator = np.random.default_rng(seed)
    per_family = DATASETS // FAMILIES
    family_of = np.arange(DATASETS) % FAMILIES
    members = [np.flatnonzero(family_of == f) for f in range(FAMILIES)]
    dataset_edges: list[tuple[int, int]] = []  # (child, parent), ids are 1-based
    for family in members:
        for position in range(1, per_family):
            count = min(position, 4)
            parents = generator.choice(position, size=count, replace=False)
            child = int(family[position]) + 1
            dataset_edges.extend((child, int(family[p]) + 1) for p in parents)
    version_rows, version_links, parent_edges = [], [], 0
    versions_per_model = VERSIONS // MODELS
    for model in range(MODELS):
        for number in range(1, versions_per_model + 1):
            version_id = model * versions_per_model + number
            has_parent = number > 1 and generator.random() < 0.5
            parent_edges += has_parent
            version_rows.append((version_id, model + 1, number, number - 1 if has_parent else None))
            family = members[model % FAMILIES]
            trained, evaluated = generator.choice(family, size=2, replace=False) + 1
            version_links += [(version_id, int(trained), "trained-on"),
                              (version_id, int(evaluated), "evaluated-on")]
    # Trim derived-from edges at random so the graph has exactly EDGES edges.
    keep = EDGES - len(version_links) - parent_edges
    chosen = np.sort(generator.choice(len(dataset_edges), size=keep, replace=False))
    dataset_edges = [dataset_edges[i] for i in chosen]
    return dataset_edges, version_rows, version_links


def build_graph_catalogue(path):
    """The generated graph, bulk-inserted into a new SQLite catalogue, and the same in networkx."""
    url = f"sqlite:///{path}"
    assert run_cli(["--db", url, "init"]).exit_code == 0
    catalogue = open_catalogue(url)
    dataset_edges, version_rows, version_links = _generate()
    now = datetime(2026, 3, 2, tzinfo=UTC)
    started = time.perf_counter()
    with catalogue.engine.begin() as connection:
        connection.execute(insert(t.Blob), [{"digest": "0" * 64, "size": 0}])
        connection.execute(insert(t.Model), [
            {"id": m + 1, "name": f"line-{m}", "description": "", "created_at": now,
             "created_by": "bench"} for m in range(MODELS)])
        connection.execute(insert(t.Dataset), [
            {"id": i, "name": f"set-{i}", "role": "training", "source_uri": "", "rows": 1,
             "content_digest": "0" * 64, "schema_fingerprint": "0" * 64, "schema_json": "{}",
             "fingerprint_digest": "0" * 64, "registration_digest": "0" * 64,
             "created_at": now, "created_by": "bench"} for i in range(1, DATASETS + 1)])
        connection.execute(insert(t.DatasetParent), [
            {"child_id": c, "parent_id": p} for c, p in dataset_edges])
        connection.execute(insert(t.Version), [
            {"id": v, "model_id": m, "number": n, "parent_number": parent,
             "document_digest": "0" * 64, "stored_blob_digest": "0" * 64,
             "document_kind": "artifact",
             "document_summary_json": "{}", "input_schema_json": "{}",
             "registration_digest": "0" * 64, "created_at": now, "created_by": "bench"}
            for v, m, n, parent in version_rows])
        connection.execute(insert(t.VersionDataset), [
            {"version_id": v, "dataset_id": d, "relation": r} for v, d, r in version_links])
    print(f"\nbulk insert of the graph: {time.perf_counter() - started:.1f} s")
    graph = networkx.DiGraph()
    graph.add_nodes_from(("dataset", i) for i in range(1, DATASETS + 1))
    graph.add_nodes_from(("version", v) for v, *_ in version_rows)
    graph.add_edges_from((("dataset", p), ("dataset", c)) for c, p in dataset_edges)
    graph.add_edges_from((("dataset", d), ("version", v)) for v, d, _ in version_links)
    by_number = {(m, n): v for v, m, n, _ in version_rows}
    graph.add_edges_from((("version", by_number[(m, parent)]), ("version", v))
                         for v, m, _, parent in version_rows if parent is not None)
    return catalogue, graph


@pytest.fixture(scope="module")
def big_catalogue(tmp_path_factory):
    catalogue, graph = build_graph_catalogue(tmp_path_factory.mktemp("bench") / "catalogue.db")
    yield catalogue, graph
    catalogue.close()


def _timed(function, runs: int = 5) -> tuple[object, float, float]:
    """The result and the best processor and wall-clock times of several runs.

    Processor time is what is asserted: it stays steady on a machine shared with other work,
    where wall-clock time depends on who else is running.
    """
    best_cpu = best_wall = float("inf")
    for _ in range(runs):
        cpu, wall = time.process_time(), time.perf_counter()
        result = function()
        best_cpu = min(best_cpu, time.process_time() - cpu)
        best_wall = min(best_wall, time.perf_counter() - wall)
    return result, best_cpu, best_wall


def test_downstream_of_a_root_is_fast_and_matches_networkx(big_catalogue):
    catalogue, graph = big_catalogue
    assert graph.number_of_nodes() == DATASETS + VERSIONS == 100_000
    assert graph.number_of_edges() == EDGES
    root = ("dataset", 1)
    seeds = walks.seeds_for(walks.NodeKey("dataset", 1))
    with UnitOfWork(catalogue, write=False) as uow:
        reached, cpu, wall = _timed(lambda: walks.walk(uow.session, seeds, "down"))
    answer = {(r.key.kind, r.key.ref) for r in reached} - {root}
    expected, reference_cpu, _ = _timed(lambda: networkx.descendants(graph, root))
    assert answer == expected  # reference: networkx.descendants on the same graph
    print(f"downstream of {root}: {len(answer)} nodes; recursive CTE on SQLite "
          f"{cpu * 1000:.1f} ms processor time ({wall * 1000:.1f} ms wall clock), best of 5; "
          f"networkx.descendants in memory {reference_cpu * 1000:.1f} ms; "
          f"ratio {cpu / reference_cpu:.2f}")
    assert cpu < LIMIT_SECONDS


def test_figure_for_an_index_on_parent_number(big_catalogue):
    """Not a migration: whether an index on versions (model_id, parent_number) would help the
    step to child versions, measured on the bench copy only."""
    catalogue, _ = big_catalogue
    seeds = walks.seeds_for(walks.NodeKey("dataset", 1))

    def best() -> float:
        with UnitOfWork(catalogue, write=False) as uow:
            return _timed(lambda: walks.walk(uow.session, seeds, "down"))[1]

    without = best()
    with catalogue.engine.begin() as connection:
        connection.exec_driver_sql(
            "CREATE INDEX bench_versions_parent ON versions (model_id, parent_number)")
    try:
        with_index = best()
    finally:
        with catalogue.engine.begin() as connection:
            connection.exec_driver_sql("DROP INDEX bench_versions_parent")
    print(f"downstream walk without an index on versions (model_id, parent_number): "
          f"{without * 1000:.1f} ms; with one: {with_index * 1000:.1f} ms; "
          f"ratio {without / with_index:.2f}")
