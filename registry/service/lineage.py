"""Lineage use cases: the graph around a node, upstream or downstream, as plain data.

Node ids are strings a person can type: `dataset/<name>`, `model/<model>/version/<n>`,
`model/<model>/stage/<stage>`, `feed/<name>` and `consumer/<name>`; a bare dataset name and
`MODEL@N` are accepted as input too.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from typing import Literal

from registry.errors import NotFound, UserError
from registry.names import NAME_PATTERN
from registry.node_ids import (
    CONTRACT_ID,
    DATASET_ID,
    STAGE_ID,
    VERSION_ID,
    contract_id,
    dataset_id,
    stage_id,
    version_id,
)
from registry.store import contract_lineage as contracts
from registry.store import lineage as walks
from registry.store.catalogue import Catalogue
from registry.store.unit_of_work import UnitOfWork
from registry.suggest import did_you_mean

Direction = Literal["up", "down", "both"]
DIRECTIONS = ("up", "down", "both")
MAX_DEPTH = 1000

_AT_VERSION = re.compile(r"^([^/@]+)@v?([0-9]{1,9})$")  # MODEL@N or MODEL@vN (DESIGN.md)


@dataclass(frozen=True)
class LineageNode:
    id: str
    kind: str  # dataset | feed | version | stage | consumer
    label: str
    recalled: bool  # a dataset marked bad by a recall
    flagged: bool  # downstream of a recalled dataset (computed from lineage, never stored)
    depth: int | None
    model: str = ""
    current: bool = True  # for a stage: someone holds it now


@dataclass(frozen=True)
class LineageEdge:
    """Reads `source <relation> target`: the source depends on the target."""

    source: str
    target: str
    # derived-from | trained-on | evaluated-on | parent-version | held-by | was-held-by |
    # built-from (feed -> dataset) | reads-feed (version -> feed) |
    # reads-output-of (consumer -> version)
    relation: str


@dataclass(frozen=True)
class LineageGraph:
    root: str
    direction: str
    depth: int | None
    nodes: tuple[LineageNode, ...]
    edges: tuple[LineageEdge, ...]

    def node(self, node_id: str) -> LineageNode | None:
        return next((n for n in self.nodes if n.id == node_id), None)


def normalise_node(text: str) -> str:
    """The canonical id of what a person typed, without looking anything up."""
    text = (text or "").strip()
    if m := _AT_VERSION.match(text):
        return version_id(m.group(1), int(m.group(2)))
    if (VERSION_ID.match(text) or STAGE_ID.match(text) or DATASET_ID.match(text)
            or CONTRACT_ID.match(text)):
        if m := VERSION_ID.match(text):
            return version_id(m.group(1), int(m.group(2)))
        return text
    if NAME_PATTERN.match(text):  # a bare name is a dataset's
        return dataset_id(text)
    raise UserError(f"not a lineage node: {text!r}; use dataset/NAME, NAME, MODEL@N, "
                    "model/MODEL/version/N, model/MODEL/stage/STAGE, feed/NAME or "
                    "consumer/NAME", place="NODE")


def _model_id(uow: UnitOfWork, name: str) -> int:
    found = uow.models.named(name)
    if found is None:
        raise NotFound(f"unknown model {name!r}{did_you_mean(name, uow.names.models())}",
                       place="NODE")
    return found.id


def resolve_node(uow: UnitOfWork, text: str) -> tuple[str, walks.NodeKey]:
    """The canonical id and database key of a node; NotFound when it is not in the catalogue."""
    node = normalise_node(text)
    if m := DATASET_ID.match(node):
        dataset = uow.datasets.named(m.group(1))
        if dataset is None:
            hint = ""
            if uow.models.named(m.group(1)) is not None:
                hint = (f"; {m.group(1)!r} is a model: name one of its versions "
                        f"({m.group(1)}@N) or stages (model/{m.group(1)}/stage/STAGE)")
            hint = hint or did_you_mean(m.group(1), uow.names.datasets())
            raise NotFound(f"unknown dataset {m.group(1)!r}{hint}", place="NODE")
        return node, walks.NodeKey("dataset", dataset.id)
    if m := VERSION_ID.match(node):
        model_id = _model_id(uow, m.group(1))
        version = uow.models.version(model_id, int(m.group(2)))
        if version is None:
            numbers = ", ".join(f"v{n}" for n in uow.names.version_numbers(model_id)) or "none"
            raise NotFound(f"model {m.group(1)!r} has no version {m.group(2)}; its versions "
                           f"are {numbers}", place="NODE")
        return node, walks.NodeKey("version", version.id)
    if m := CONTRACT_ID.match(node):
        kind, name = m.group(1), m.group(2)
        contract = uow.lineage.contract_key(kind, name)
        if contract is None:
            raise NotFound(f"unknown {kind} {name!r}", place="NODE")
        return node, contract
    m = STAGE_ID.match(node)
    assert m is not None
    model_id = _model_id(uow, m.group(1))
    if not uow.lineage.stage_exists(model_id, m.group(2)):
        raise NotFound(f"no version of {m.group(1)!r} has ever held the stage {m.group(2)!r}",
                       place="NODE")
    return node, walks.NodeKey("stage", model_id, m.group(2))


def node_name(facts: walks.NodeFacts) -> str:
    if facts.key.kind == "dataset":
        return dataset_id(facts.name)
    if facts.key.kind in contracts.CONTRACT_KINDS:
        return contract_id(facts.key.kind, facts.name)
    if facts.key.kind == "version":
        return version_id(facts.model, facts.number or 0)
    return stage_id(facts.model, facts.name)


def node_label(facts: walks.NodeFacts) -> str:
    if facts.key.kind == "dataset":
        return facts.name
    if facts.key.kind in contracts.CONTRACT_KINDS:
        return f"{facts.key.kind} {facts.name}"
    if facts.key.kind == "version":
        return f"{facts.model} v{facts.number}"
    return f"{facts.model} {facts.name}"


def check_depth(depth: int | None) -> int | None:
    if depth is None:
        return None
    if isinstance(depth, bool) or not isinstance(depth, int) or not 0 <= depth <= MAX_DEPTH:
        raise UserError(f"depth must be a whole number from 0 to {MAX_DEPTH}", place="--depth")
    return depth


def flagged_keys(uow: UnitOfWork) -> set[walks.NodeKey]:
    """Every node downstream of a recalled dataset, the recalled datasets included."""
    walked: dict[walks.NodeKey, int | None] = {
        r.key: None for r in uow.lineage.walk(walks.recalled_seeds(), "down")}
    if not walked:
        return set()
    # A feed built from a recalled dataset flags its readers and their consumers too.
    return set(uow.lineage.expand(walked, "down"))


def reach(uow: UnitOfWork, key: walks.NodeKey, direction: str, depth: int | None
          ) -> dict[walks.NodeKey, int | None]:
    """Every node reached from `key` each way, at its smallest depth, contract edges included."""
    reached: dict[walks.NodeKey, int | None] = {}
    for way in (("up", "down") if direction == "both" else (direction,)):
        start = {key: 0 if depth is not None else None}
        if key.kind not in contracts.CONTRACT_KINDS:
            start = {item.key: item.depth
                     for item in uow.lineage.walk(walks.seeds_for(key), way, depth)}
        for found, found_depth in uow.lineage.expand(start, way, depth).items():
            known = reached.get(found)
            reached[found] = (found_depth if known is None or found_depth is None
                              else min(known, found_depth))
    return reached


def facts_of(uow: UnitOfWork, keys) -> dict[walks.NodeKey, walks.NodeFacts]:
    keys = set(keys)
    return uow.lineage.facts(keys)


def graph_in(uow: UnitOfWork, node: str, direction: str, depth: int | None = None) -> LineageGraph:
    """The lineage graph around one node, inside an open unit of work."""
    if direction not in DIRECTIONS:
        raise UserError(f"direction must be one of {', '.join(DIRECTIONS)}", place="direction")
    depth = check_depth(depth)
    root, key = resolve_node(uow, node)
    reached = reach(uow, key, direction, depth)
    links = uow.lineage.links(reached)
    facts = facts_of(uow, reached)
    flagged = flagged_keys(uow)
    nodes = sorted(
        (LineageNode(id=node_name(facts[k]), kind=k.kind, label=node_label(facts[k]),
                     recalled=facts[k].recalled, flagged=k in flagged, depth=d,
                     model=facts[k].model,
                     current=facts[k].is_current if k.kind == "stage" else True)
         for k, d in reached.items() if k in facts),
        key=lambda n: (walks.KINDS.index(n.kind), n.depth or 0, n.id))
    edges = sorted({LineageEdge(node_name(facts[link.downstream]), node_name(facts[link.upstream]),
                                link.relation)
                    for link in links if link.downstream in facts and link.upstream in facts},
                   key=lambda e: (e.source, e.target, e.relation))
    return LineageGraph(root=root, direction=direction, depth=depth, nodes=tuple(nodes),
                        edges=tuple(edges))


def lineage_of(catalogue: Catalogue, node: str, direction: str,
               depth: int | None = None) -> LineageGraph:
    """What went into a node (`up`), what came of it (`down`), or both, as far as `depth`."""
    with UnitOfWork(catalogue, write=False) as uow:
        return graph_in(uow, node, direction, depth)


def provenance_of(catalogue: Catalogue, node: str, direction: str,
                  depth: int | None = None) -> dict:
    """The lineage graph around a node as a W3C PROV-JSON document."""
    from registry import provenance as prov

    with UnitOfWork(catalogue, write=False) as uow:
        graph = graph_in(uow, node, direction, depth)
        root, key = resolve_node(uow, node)
        reached = {key} | set(reach(uow, key, direction, depth))
        facts = facts_of(uow, reached)
        entities = [prov.ProvEntity(id=node_name(f), kind=f.key.kind, label=node_label(f),
                                    created_at=f.created_at, created_by=f.created_by,
                                    recalled=f.recalled, recall_reason=f.recall_reason)
                    for f in facts.values() if f.key.kind != "stage"]
        staged = {(f.key.ref, f.name) for f in facts.values() if f.key.kind == "stage"}
        version_ids = {k.ref: node_name(facts[k]) for k in facts if k.kind == "version"}
        events = []
        for row in uow.stages.events_of_versions(version_ids):
            if (row.model_id, row.stage) in staged:
                events.append(prov.ProvStageEvent(
                    id=row.id, version=version_ids[row.version_id], stage=row.stage,
                    event=row.event, at=walks.utc_iso(row.created_at), by=row.created_by))
    uses = [prov.ProvUse(version=e.source, dataset=e.target, relation=e.relation)
            for e in graph.edges if e.relation in ("trained-on", "evaluated-on", "reads-feed")]
    # A feed is derived from the datasets it is built from; what a consumer makes, from the
    # output of the version it reads.
    derivations = [prov.ProvDerivation(derived=e.source, source=e.target, relation=e.relation)
                   for e in graph.edges if e.relation in ("derived-from", "parent-version",
                                                          "built-from", "reads-output-of")]
    return prov.prov_document(entities, uses, derivations, events)
