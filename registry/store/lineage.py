"""Lineage walks in the database: recursive CTEs over the indexed edge tables, both directions.

The graph is layered, so each walk is a chain of common table expressions, one per layer:
datasets (derived-from, recursive), versions (trained-on / evaluated-on, then parent version,
recursive) and stages (stage holdings and stage events). Each recursive step follows one indexed
edge lookup per row, so the cost grows with the answer, not with the catalogue. The SQL is plain
SQLAlchemy core and runs unchanged on SQLite and PostgreSQL.
"""

from __future__ import annotations

from collections.abc import Iterable, Iterator
from dataclasses import dataclass
from typing import Literal

from sqlalchemy import (
    CTE,
    CompoundSelect,
    Integer,
    Select,
    String,
    and_,
    func,
    literal,
    select,
    text,
    union,
    union_all,
)
from sqlalchemy.orm import Session

from registry.moments import utc_iso
from registry.store import tables as t

Direction = Literal["up", "down"]
# Node kinds, in layer order from the left (upstream) to the right (downstream) of a drawing.
KINDS = ("dataset", "feed", "version", "stage", "consumer")  # feeds, consumers: contract_lineage
CHUNK = 500  # ids per IN list: well below SQLite's and PostgreSQL's bound-parameter limits


@dataclass(frozen=True, order=True)
class NodeKey:
    """A node by database identity: a dataset id, a version id, or a model id with a stage."""

    kind: str
    ref: int
    stage: str = ""


@dataclass(frozen=True)
class Reached:
    key: NodeKey
    depth: int | None  # edges from the start; None for walks without a depth limit


@dataclass(frozen=True)
class Link:
    """One edge, read as `downstream <relation> upstream` (training set derived-from extract)."""

    downstream: NodeKey
    upstream: NodeKey
    relation: str


@dataclass(frozen=True)
class Seeds:
    """Where a walk starts: any mix of datasets, versions and stages."""

    datasets: Select | None = None
    versions: Select | None = None
    stages: Select | None = None  # columns: model_id, stage


def seeds_for(key: NodeKey) -> Seeds:
    if key.kind == "dataset":
        return Seeds(datasets=select(literal(key.ref, Integer).label("id")))
    if key.kind == "version":
        return Seeds(versions=select(literal(key.ref, Integer).label("id")))
    return Seeds(stages=select(literal(key.ref, Integer).label("model_id"),
                               literal(key.stage, String).label("stage")))


def recalled_seeds() -> Seeds:
    return Seeds(datasets=select(t.Dataset.id).where(t.Dataset.recalled_at.is_not(None)))


def _depth(value, max_depth: int | None):
    # Without a limit every row carries depth 0, so UNION keeps each node once and a walk
    # ends even on a cycle; with a limit the depth bounds the walk instead.
    return literal(0, Integer) if max_depth is None else value


def _next(depth_column, max_depth: int | None):
    return literal(0, Integer) if max_depth is None else depth_column + 1


def _within(statement: Select, depth_column, max_depth: int | None) -> Select:
    return statement if max_depth is None else statement.where(depth_column < max_depth)


def _anchor(parts: list[Select], name: str) -> CTE | None:
    if not parts:
        return None
    return (parts[0] if len(parts) == 1 else union(*parts)).cte(name)


def _recursive(anchor_parts: list[Select], name: str, step) -> CTE:
    """A recursive CTE (id, depth) from its anchor rows and a function giving the step."""
    start = _anchor(anchor_parts, f"{name}_start")
    assert start is not None  # called only with anchor rows
    walked = select(start.c.id, start.c.depth).cte(name, recursive=True)
    return walked.union(step(walked))


def _stage_rows(versions: CTE, max_depth: int | None) -> list[Select]:
    """Stages the walked versions hold now (holdings) or held once (events)."""
    rows = []
    for table in (t.StageEvent.__table__, t.StageHolding.__table__):
        rows.append(_within(
            select(literal("stage").label("kind"), table.c.model_id.label("ref"),
                   table.c.stage, _next(versions.c.depth, max_depth).label("depth"))
            .join(versions, table.c.version_id == versions.c.id),
            versions.c.depth, max_depth))
    return rows


def _as_nodes(walked: CTE, kind: str) -> Select:
    return select(literal(kind).label("kind"), walked.c.id.label("ref"),
                  literal("").label("stage"), walked.c.depth)


def _stage_seed_rows(seed) -> Select:
    return select(literal("stage").label("kind"), seed.c.model_id.label("ref"), seed.c.stage,
                  literal(0, Integer).label("depth"))


def _downstream(seeds: Seeds, max_depth: int | None) -> Select | CompoundSelect:
    edge = t.DatasetParent.__table__
    link = t.VersionDataset.__table__
    parent = t.Version.__table__.alias("parent_version")
    child = t.Version.__table__.alias("child_version")

    def derived(walked: CTE) -> Select:  # datasets made from a walked dataset
        return _within(select(edge.c.child_id, _next(walked.c.depth, max_depth))
                       .join(walked, edge.c.parent_id == walked.c.id),
                       walked.c.depth, max_depth)

    def descendants(walked: CTE) -> Select:  # versions naming a walked version as parent
        return _within(select(child.c.id, _next(walked.c.depth, max_depth))
                       .select_from(walked.join(parent, parent.c.id == walked.c.id)
                                    .join(child, and_(child.c.model_id == parent.c.model_id,
                                                      # always true (a parent is registered
                                                      # first); it lets the (model_id, number)
                                                      # index bound the scan to later versions
                                                      child.c.number > parent.c.number,
                                                      child.c.parent_number == parent.c.number))),
                       walked.c.depth, max_depth)

    datasets = versions = None
    if seeds.datasets is not None:
        seed = seeds.datasets.subquery("dataset_seed")
        datasets = _recursive([select(seed.c.id, literal(0, Integer).label("depth"))],
                              "walked_datasets", derived)
    version_anchor = []
    if seeds.versions is not None:
        seed = seeds.versions.subquery("version_seed")
        version_anchor.append(select(seed.c.id, literal(0, Integer).label("depth")))
    if datasets is not None:
        version_anchor.append(_within(
            select(link.c.version_id.label("id"), _next(datasets.c.depth, max_depth).label("depth"))
            .join(datasets, link.c.dataset_id == datasets.c.id),
            datasets.c.depth, max_depth))
    if version_anchor:
        versions = _recursive(version_anchor, "walked_versions", descendants)

    parts: list[Select] = []
    if datasets is not None:
        parts.append(_as_nodes(datasets, "dataset"))
    if versions is not None:
        parts.append(_as_nodes(versions, "version"))
        parts.extend(_stage_rows(versions, max_depth))
    if seeds.stages is not None:  # a stage is the last layer: nothing lies downstream of it
        parts.append(_stage_seed_rows(seeds.stages.subquery("stage_seed")))
    return union_all(*parts) if len(parts) > 1 else parts[0]


def _upstream(seeds: Seeds, max_depth: int | None) -> Select | CompoundSelect:
    edge = t.DatasetParent.__table__
    link = t.VersionDataset.__table__
    child = t.Version.__table__.alias("child_version")
    parent = t.Version.__table__.alias("parent_version")

    def sources(walked: CTE) -> Select:  # datasets a walked dataset was made from
        return _within(select(edge.c.parent_id, _next(walked.c.depth, max_depth))
                       .join(walked, edge.c.child_id == walked.c.id),
                       walked.c.depth, max_depth)

    def ancestors(walked: CTE) -> Select:  # the parent version of a walked version
        return _within(select(parent.c.id, _next(walked.c.depth, max_depth))
                       .select_from(walked.join(child, child.c.id == walked.c.id)
                                    .join(parent, and_(parent.c.model_id == child.c.model_id,
                                                       parent.c.number == child.c.parent_number))),
                       walked.c.depth, max_depth)

    parts: list[Select] = []
    version_anchor = []
    if seeds.stages is not None:
        seed = seeds.stages.subquery("stage_seed")
        parts.append(_stage_seed_rows(seed))
        if max_depth is None or max_depth > 0:
            for table in (t.StageEvent.__table__, t.StageHolding.__table__):
                version_anchor.append(
                    select(table.c.version_id.label("id"),
                           _depth(literal(1, Integer), max_depth).label("depth"))
                    .join(seed, and_(table.c.model_id == seed.c.model_id,
                                     table.c.stage == seed.c.stage)))
    if seeds.versions is not None:
        seed = seeds.versions.subquery("version_seed")
        version_anchor.append(select(seed.c.id, literal(0, Integer).label("depth")))
    versions = None
    if version_anchor:
        versions = _recursive(version_anchor, "walked_versions", ancestors)
        parts.append(_as_nodes(versions, "version"))

    dataset_anchor = []
    if seeds.datasets is not None:
        seed = seeds.datasets.subquery("dataset_seed")
        dataset_anchor.append(select(seed.c.id, literal(0, Integer).label("depth")))
    if versions is not None:
        dataset_anchor.append(_within(
            select(link.c.dataset_id.label("id"), _next(versions.c.depth, max_depth).label("depth"))
            .join(versions, link.c.version_id == versions.c.id),
            versions.c.depth, max_depth))
    if dataset_anchor:
        parts.append(_as_nodes(_recursive(dataset_anchor, "walked_datasets", sources), "dataset"))
    return union_all(*parts) if len(parts) > 1 else parts[0]


def walk_statement(seeds: Seeds, direction: Direction, max_depth: int | None = None) -> Select:
    """One statement: every node reached from the seeds, each once, with its smallest depth."""
    if max_depth is not None and max_depth < 0:
        raise ValueError("max_depth must be at least 0")
    build = _downstream if direction == "down" else _upstream
    reached = build(seeds, max_depth).subquery("reached")
    return (select(reached.c.kind, reached.c.ref, reached.c.stage,
                   func.min(reached.c.depth).label("depth"))
            .group_by(reached.c.kind, reached.c.ref, reached.c.stage))


def _without_jit(session: Session) -> None:
    # PostgreSQL estimates recursive CTEs as large, so their cost passes jit_above_cost and
    # compiling the plan takes longer (about half a second) than walking a catalogue.
    # SET LOCAL lasts until the end of the current transaction only.
    if session.get_bind().dialect.name == "postgresql":
        session.execute(text("SET LOCAL jit = off"))


def walk(session: Session, seeds: Seeds, direction: Direction,
         max_depth: int | None = None) -> list[Reached]:
    _without_jit(session)
    rows = session.execute(walk_statement(seeds, direction, max_depth)).all()
    return [Reached(NodeKey(kind, ref, stage or ""), None if max_depth is None else depth)
            for kind, ref, stage, depth in rows]


def id_chunks(values: Iterable[int]) -> Iterator[list[int]]:
    ordered = sorted(set(values))
    for start in range(0, len(ordered), CHUNK):
        yield ordered[start:start + CHUNK]


def links_among(session: Session, keys: Iterable[NodeKey]) -> list[Link]:
    """Every edge whose two ends are both among the keys: the walked subgraph's edges."""
    keys = set(keys)
    datasets = {k.ref for k in keys if k.kind == "dataset"}
    versions = {k.ref for k in keys if k.kind == "version"}
    stages = {(k.ref, k.stage) for k in keys if k.kind == "stage"}
    links: set[Link] = set()
    for chunk in id_chunks(datasets):
        for child, parent in session.execute(
                select(t.DatasetParent.child_id, t.DatasetParent.parent_id)
                .where(t.DatasetParent.child_id.in_(chunk))):
            if parent in datasets:
                links.add(Link(NodeKey("dataset", child), NodeKey("dataset", parent),
                               "derived-from"))
    number_of: dict[int, tuple[int, int, int | None]] = {}
    for chunk in id_chunks(versions):
        for version, dataset, relation in session.execute(
                select(t.VersionDataset.version_id, t.VersionDataset.dataset_id,
                       t.VersionDataset.relation).where(t.VersionDataset.version_id.in_(chunk))):
            if dataset in datasets:
                links.add(Link(NodeKey("version", version), NodeKey("dataset", dataset), relation))
        for version, model, number, parent_number in session.execute(
                select(t.Version.id, t.Version.model_id, t.Version.number, t.Version.parent_number)
                .where(t.Version.id.in_(chunk))):
            number_of[version] = (model, number, parent_number)
        held = set(session.execute(
            select(t.StageHolding.version_id, t.StageHolding.model_id, t.StageHolding.stage)
            .where(t.StageHolding.version_id.in_(chunk))).all())
        for version, model, stage in held:
            if (model, stage) in stages:
                links.add(Link(NodeKey("stage", model, stage), NodeKey("version", version),
                               "held-by"))
        for version, model, stage in session.execute(
                select(t.StageEvent.version_id, t.StageEvent.model_id, t.StageEvent.stage)
                .where(t.StageEvent.version_id.in_(chunk)).distinct()):
            if (model, stage) in stages and (version, model, stage) not in held:
                links.add(Link(NodeKey("stage", model, stage), NodeKey("version", version),
                               "was-held-by"))
    by_number = {(model, number): version for version, (model, number, _) in number_of.items()}
    for version, (model, _number, parent_number) in number_of.items():
        parent_id = (by_number.get((model, parent_number)) if parent_number is not None
                     else None)
        if parent_id is not None:
            links.add(Link(NodeKey("version", version), NodeKey("version", parent_id),
                           "parent-version"))
    return sorted(links, key=lambda link: (link.downstream, link.upstream, link.relation))


@dataclass(frozen=True)
class NodeFacts:
    """What a drawing or an export needs to know of a node."""

    key: NodeKey
    model: str = ""
    name: str = ""  # dataset name, or stage name
    number: int | None = None  # version number
    recalled: bool = False
    is_current: bool = False  # a stage someone holds now
    created_at: str = ""
    created_by: str = ""
    recall_reason: str = ""


def facts_of(session: Session, keys: Iterable[NodeKey]) -> dict[NodeKey, NodeFacts]:
    keys = set(keys)
    facts: dict[NodeKey, NodeFacts] = {}
    for chunk in id_chunks(k.ref for k in keys if k.kind == "dataset"):
        for row in session.execute(select(t.Dataset).where(t.Dataset.id.in_(chunk))).scalars():
            key = NodeKey("dataset", row.id)
            facts[key] = NodeFacts(key, name=row.name, recalled=row.recalled_at is not None,
                                   created_at=utc_iso(row.created_at),
                                   created_by=row.created_by,
                                   recall_reason=row.recall_reason or "")
    for chunk in id_chunks(k.ref for k in keys if k.kind == "version"):
        for version, model in session.execute(
                select(t.Version, t.Model.name).join(t.Model, t.Model.id == t.Version.model_id)
                .where(t.Version.id.in_(chunk))):
            key = NodeKey("version", version.id)
            facts[key] = NodeFacts(key, model=model, number=version.number,
                                   created_at=utc_iso(version.created_at),
                                   created_by=version.created_by)
    stage_keys = {k for k in keys if k.kind == "stage"}
    for chunk in id_chunks(k.ref for k in stage_keys):
        names = dict(session.execute(select(t.Model.id, t.Model.name)
                                     .where(t.Model.id.in_(chunk))).all())
        current = set(session.execute(
            select(t.StageHolding.model_id, t.StageHolding.stage)
            .where(t.StageHolding.model_id.in_(chunk)).distinct()).all())
        for key in stage_keys:
            if key.ref in names:
                facts[key] = NodeFacts(key, model=names[key.ref], name=key.stage,
                                       is_current=(key.ref, key.stage) in current)
    return facts


def stage_exists(session: Session, model_id: int, stage: str) -> bool:
    for table in (t.StageHolding, t.StageEvent):
        if session.execute(select(table.id).where(table.model_id == model_id,
                                                  table.stage == stage).limit(1)).first():
            return True
    return False


# Kept for callers that want a bare count without building objects (the benchmark).
def count_reached(session: Session, seeds: Seeds, direction: Direction,
                  max_depth: int | None = None) -> int:
    statement = walk_statement(seeds, direction, max_depth).subquery()
    _without_jit(session)
    return session.execute(select(func.count()).select_from(statement)).scalar_one()


__all__ = ["Direction", "KINDS", "Link", "NodeFacts", "NodeKey", "Reached", "Seeds",
           "count_reached", "facts_of", "links_among",
           "recalled_seeds", "seeds_for", "stage_exists", "utc_iso", "walk",
           "walk_statement"]
