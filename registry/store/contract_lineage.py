"""Feeds and consumers in lineage walks: a feed is built from datasets and read by versions; a
consumer reads the output of the versions serving its model (holding an exclusive stage).

    dataset <-built-from- feed <-reads-feed- version <-reads-output-of- consumer

The recursive walks of registry.store.lineage cover datasets, versions and stages; `expand`
follows the contract edges from what they reached and walks on from whatever those edges reach,
until nothing new turns up. A catalogue without feeds or consumers costs one query.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping

from sqlalchemy import select
from sqlalchemy.orm import Session

from registry.store import lineage as walks
from registry.store import tables as t
from registry.store.lineage import Link, NodeFacts, NodeKey, Seeds, utc_iso

CONTRACT_KINDS = ("feed", "consumer")


def has_contracts(session: Session) -> bool:
    return (session.execute(select(t.Feed.id).limit(1)).first() is not None
            or session.execute(select(t.Consumer.id).limit(1)).first() is not None)


def _ids(keys: Iterable[NodeKey], kind: str) -> list[int]:
    return sorted({k.ref for k in keys if k.kind == kind})


def _rows(session: Session, statement_for, ids: list[int]):
    for chunk in walks.id_chunks(ids):
        yield from session.execute(statement_for(chunk)).all()


def _feed_of_versions(session: Session, version_ids: list[int]) -> dict[int, int]:
    """version id -> the feed it reads: its manifest's, else its model's."""
    found: dict[int, int] = {}
    for version, feed in _rows(session, lambda chunk: (
            select(t.Version.id, t.ModelFeed.feed_id)
            .join(t.ModelFeed, t.ModelFeed.model_id == t.Version.model_id)
            .where(t.Version.id.in_(chunk))), version_ids):
        found[version] = feed
    for version, feed in _rows(session, lambda chunk: (
            select(t.VersionFeed.version_id, t.VersionFeed.feed_id)
            .where(t.VersionFeed.version_id.in_(chunk))), version_ids):
        found[version] = feed
    return found


def _readers_of_feeds(session: Session, feed_ids: list[int]) -> list[tuple[int, int]]:
    """(feed id, version id) for every version reading one of the feeds."""
    pairs = set(_rows(session, lambda chunk: (
        select(t.VersionFeed.feed_id, t.VersionFeed.version_id)
        .where(t.VersionFeed.feed_id.in_(chunk))), feed_ids))
    by_model = list(_rows(session, lambda chunk: (
        select(t.ModelFeed.feed_id, t.Version.id)
        .join(t.Version, t.Version.model_id == t.ModelFeed.model_id)
        .where(t.ModelFeed.feed_id.in_(chunk))), feed_ids))
    own = _declared(session, [version for _, version in by_model])
    pairs |= {(feed, version) for feed, version in by_model if own.get(version, feed) == feed}
    return sorted(pairs)


def _declared(session: Session, version_ids: list[int]) -> dict[int, int]:
    return dict(_rows(session, lambda chunk: (
        select(t.VersionFeed.version_id, t.VersionFeed.feed_id)
        .where(t.VersionFeed.version_id.in_(chunk))), version_ids))


def _serving(session: Session, version_ids: list[int]) -> list[tuple[int, int]]:
    """(version id, model id) of the versions among these holding an exclusive stage."""
    return sorted(set(_rows(session, lambda chunk: (
        select(t.StageHolding.version_id, t.StageHolding.model_id)
        .where(t.StageHolding.version_id.in_(chunk), t.StageHolding.is_exclusive)), version_ids)))


def _consumers_of_models(session: Session, model_ids: list[int]) -> list[tuple[int, int]]:
    """(consumer id, model id)."""
    return list(_rows(session, lambda chunk: (
        select(t.Consumer.id, t.Consumer.model_id).where(t.Consumer.model_id.in_(chunk))),
        model_ids))


def _serving_of_models(session: Session, model_ids: list[int]) -> list[tuple[int, int]]:
    """(model id, version id) of every version holding an exclusive stage of the models."""
    return sorted(set(_rows(session, lambda chunk: (
        select(t.StageHolding.model_id, t.StageHolding.version_id)
        .where(t.StageHolding.model_id.in_(chunk), t.StageHolding.is_exclusive)), model_ids)))


def _seeds(kind: str, ids: list[int]) -> Seeds:
    column = t.Dataset.id if kind == "dataset" else t.Version.id
    statement = select(column.label("id")).where(column.in_(ids))
    return Seeds(datasets=statement) if kind == "dataset" else Seeds(versions=statement)


def _hops(session: Session, frontier: dict[NodeKey, int | None], direction: str
          ) -> list[tuple[NodeKey, NodeKey]]:
    """(from, to) for every contract edge leaving the frontier in the walk's direction."""
    hops = []
    if direction == "down":
        datasets = _ids(frontier, "dataset")
        for feed, dataset in _rows(session, lambda chunk: (
                select(t.FeedSource.feed_id, t.FeedSource.dataset_id)
                .where(t.FeedSource.dataset_id.in_(chunk))), datasets):
            hops.append((NodeKey("dataset", dataset), NodeKey("feed", feed)))
        for feed, version in _readers_of_feeds(session, _ids(frontier, "feed")):
            hops.append((NodeKey("feed", feed), NodeKey("version", version)))
        serving = _serving(session, _ids(frontier, "version"))
        consumers = _consumers_of_models(session, sorted({model for _, model in serving}))
        for version, model in serving:
            hops += [(NodeKey("version", version), NodeKey("consumer", consumer))
                     for consumer, of_model in consumers if of_model == model]
    else:
        consumers = list(_rows(session, lambda chunk: (
            select(t.Consumer.id, t.Consumer.model_id).where(t.Consumer.id.in_(chunk))),
            _ids(frontier, "consumer")))
        serving = _serving_of_models(session, sorted({model for _, model in consumers}))
        for consumer, model in consumers:
            hops += [(NodeKey("consumer", consumer), NodeKey("version", version))
                     for of_model, version in serving if of_model == model]
        for version, feed in _feed_of_versions(session, _ids(frontier, "version")).items():
            hops.append((NodeKey("version", version), NodeKey("feed", feed)))
        for feed, dataset in _rows(session, lambda chunk: (
                select(t.FeedSource.feed_id, t.FeedSource.dataset_id)
                .where(t.FeedSource.feed_id.in_(chunk))), _ids(frontier, "feed")):
            hops.append((NodeKey("feed", feed), NodeKey("dataset", dataset)))
    return hops


def _offer(reached: dict[NodeKey, int | None], found: dict[NodeKey, int | None],
           max_depth: int | None, key: NodeKey, depth: int | None) -> None:
    """Record `key` at `depth` in both `reached` and `found`, unless it lies past `max_depth`
    or `reached` already holds it at that depth or less."""
    if max_depth is not None and depth is not None and depth > max_depth:
        return
    if key in reached:
        held = reached[key]
        if depth is None or held is None or held <= depth:
            return
    reached[key] = depth
    found[key] = depth


def expand(session: Session, reached: Mapping[NodeKey, int | None], direction: walks.Direction,
           max_depth: int | None = None) -> dict[NodeKey, int | None]:
    """`reached` (a walk's result, node -> depth) grown by the contract edges and the walks
    beyond them, each node at its smallest depth (None throughout when there is no limit)."""
    grown = dict(reached)
    if not has_contracts(session):
        return grown
    frontier = dict(reached)
    while frontier:
        found: dict[NodeKey, int | None] = {}
        for source, target in _hops(session, frontier, direction):
            base = frontier.get(source)
            _offer(grown, found, max_depth, target, None if base is None else base + 1)
        # Walk on from the datasets and versions the contract edges reached.
        by_depth: dict[tuple[str, int | None], list[int]] = {}
        for key, depth in list(found.items()):
            if key.kind in ("dataset", "version"):
                by_depth.setdefault((key.kind, depth), []).append(key.ref)
        for (kind, depth), ids in by_depth.items():
            left = None if max_depth is None or depth is None else max_depth - depth
            for item in walks.walk(session, _seeds(kind, ids), direction, left):
                _offer(grown, found, max_depth, item.key,
                       None if depth is None or item.depth is None else depth + item.depth)
        frontier = found
    return grown


def contract_links(session: Session, keys: Iterable[NodeKey]) -> list[Link]:
    """Every contract edge whose two ends are both among the keys."""
    keys = set(keys)
    links = set()
    for direction in ("down", "up"):
        for source, target in _hops(session, {k: 0 for k in keys}, direction):
            if source in keys and target in keys:
                # A link reads `downstream <relation> upstream`.
                down, up = (target, source) if direction == "down" else (source, target)
                relation = {"feed": "built-from", "version": "reads-feed",
                            "consumer": "reads-output-of"}[down.kind]
                links.add(Link(down, up, relation))
    return sorted(links, key=lambda link: (link.downstream, link.upstream, link.relation))


def contract_facts(session: Session, keys: Iterable[NodeKey]) -> dict[NodeKey, NodeFacts]:
    keys = set(keys)
    facts: dict[NodeKey, NodeFacts] = {}
    for feed in _rows(session, lambda chunk: select(t.Feed).where(t.Feed.id.in_(chunk)),
                      _ids(keys, "feed")):
        row = feed[0]
        key = NodeKey("feed", row.id)
        facts[key] = NodeFacts(key, name=row.name, created_at=utc_iso(row.created_at),
                               created_by=row.created_by)
    for consumer, model in _rows(session, lambda chunk: (
            select(t.Consumer, t.Model.name).join(t.Model, t.Model.id == t.Consumer.model_id)
            .where(t.Consumer.id.in_(chunk))), _ids(keys, "consumer")):
        key = NodeKey("consumer", consumer.id)
        facts[key] = NodeFacts(key, model=model, name=consumer.name,
                               created_at=utc_iso(consumer.created_at),
                               created_by=consumer.created_by)
    return facts


def feed_key(session: Session, name: str) -> NodeKey | None:
    found = session.execute(select(t.Feed.id).where(t.Feed.name == name)).scalar_one_or_none()
    return None if found is None else NodeKey("feed", found)


def consumer_key(session: Session, name: str) -> NodeKey | None:
    found = session.execute(
        select(t.Consumer.id).where(t.Consumer.name == name)).scalar_one_or_none()
    return None if found is None else NodeKey("consumer", found)
