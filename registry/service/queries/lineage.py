"""The lineage page: the graph around a node, and the stages each version in it holds now."""

from __future__ import annotations

from dataclasses import dataclass

from registry.service.lineage import LineageGraph, graph_in, version_id
from registry.store.catalogue import Catalogue
from registry.store.unit_of_work import UnitOfWork


@dataclass(frozen=True)
class LineagePage:
    graph: LineageGraph
    held: dict[str, tuple[str, ...]]  # version node id -> the stages it holds now


def lineage_page(catalogue: Catalogue, node: str, direction: str, depth: int | None
                 ) -> LineagePage:
    with UnitOfWork(catalogue, write=False) as uow:
        graph = graph_in(uow, node, direction, depth)
        held: dict[str, list[str]] = {}
        models = {n.model for n in graph.nodes if n.kind == "version"}
        for model in sorted(models):
            line = uow.models.named(model)
            for holding, number in uow.pages.holdings(line.id) if line else ():
                held.setdefault(version_id(model, number), []).append(holding.stage)
        return LineagePage(graph, {k: tuple(v) for k, v in held.items()})
