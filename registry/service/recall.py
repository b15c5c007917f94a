"""Recalling a dataset: mark it bad, and name everything downstream that someone must act on.

What is downstream is computed from lineage whenever it is asked for, never stored a second time,
so a version registered after a recall is flagged as surely as one registered before it.
"""

from __future__ import annotations

from collections import deque
from dataclasses import dataclass

from registry.errors import NotFound, UserError
from registry.service.actors import Actor
from registry.service.authorisation import authorise
from registry.service.lineage import dataset_id, node_name, version_id
from registry.service.model_policy import policy_of
from registry.store import lineage as walks
from registry.store import tables as t
from registry.store.catalogue import Catalogue
from registry.store.unit_of_work import UnitOfWork, utc_now
from registry.suggest import did_you_mean


@dataclass(frozen=True)
class FlaggedVersion:
    model: str
    version: int
    stages: tuple[str, ...]  # the stages it holds right now


@dataclass(frozen=True)
class StageToActOn:
    model: str
    version: int
    stage: str


@dataclass(frozen=True)
class RecallOutcome:
    dataset: str
    reason: str
    recalled_at: str
    recalled_by: str
    downstream_datasets: tuple[str, ...]
    downstream_versions: tuple[FlaggedVersion, ...]
    holding_stages: tuple[StageToActOn, ...]  # versions in a stage now: someone must act on these
    audit_sequence: int
    # Feeds built from the recalled data, and what reads them (flagged, not blocked: their own
    # training data is not in question).
    flagged_feeds: tuple[str, ...] = ()
    feed_readers: tuple[FlaggedVersion, ...] = ()
    flagged_consumers: tuple[str, ...] = ()


@dataclass(frozen=True)
class RecalledSource:
    """A recalled dataset upstream of a version, and the lineage path from it to the version."""

    dataset: str
    reason: str
    recalled_at: str
    recalled_by: str
    chain: tuple[str, ...]  # node ids from the recalled dataset down to the version


def _downstream_of_dataset(uow: UnitOfWork, dataset: t.Dataset):
    reached = uow.lineage.walk(walks.seeds_for(walks.NodeKey("dataset", dataset.id)), "down")
    dataset_ids = sorted(r.key.ref for r in reached
                         if r.key.kind == "dataset" and r.key.ref != dataset.id)
    version_ids = sorted(r.key.ref for r in reached if r.key.kind == "version")
    facts = uow.lineage.facts([walks.NodeKey("dataset", i) for i in dataset_ids]
                              + [walks.NodeKey("version", i) for i in version_ids])
    held = uow.stages.stages_of_versions(version_ids)
    datasets = tuple(sorted(facts[walks.NodeKey("dataset", i)].name for i in dataset_ids))
    versions = tuple(sorted(
        (FlaggedVersion(facts[k].model, facts[k].number or 0, tuple(held.get(k.ref, ())))
         for k in (walks.NodeKey("version", i) for i in version_ids)),
        key=lambda v: (v.model, v.version)))
    to_act = tuple(StageToActOn(v.model, v.version, stage)
                   for v in versions for stage in v.stages
                   if stage not in _resting_stages(uow, v.model))
    return datasets, versions, to_act


def _flagged_through_feeds(uow: UnitOfWork, dataset: t.Dataset,
                           lineage_versions: tuple[FlaggedVersion, ...]):
    """Feeds built from the dataset or from what was derived from it, the versions reading
    them (beyond those its lineage already names, with the stages they hold) and the consumers
    downstream of either."""
    start: dict[walks.NodeKey, int | None] = {r.key: None for r in uow.lineage.walk(
        walks.seeds_for(walks.NodeKey("dataset", dataset.id)), "down")}
    reached = uow.lineage.expand(start, "down")
    extra = [k for k in reached if k not in start]
    facts = uow.lineage.facts(extra)
    named = {(v.model, v.version) for v in lineage_versions}
    feeds = tuple(sorted(facts[k].name for k in extra if k.kind == "feed"))
    consumers = tuple(sorted(facts[k].name for k in extra if k.kind == "consumer"))
    reader_keys = [k for k in extra if k.kind == "version"
                   and (facts[k].model, facts[k].number) not in named]
    held = uow.feeds.stages_held([k.ref for k in reader_keys])
    readers = sorted((FlaggedVersion(facts[k].model, facts[k].number or 0,
                                     tuple(held.get(k.ref, ()))) for k in reader_keys),
                     key=lambda v: (v.model, v.version))
    return feeds, tuple(readers), consumers


def _resting_stages(uow: UnitOfWork, model: str) -> tuple[str, ...]:
    """Stages from which nothing is served: the first rung of the ladder, and retired."""
    line = uow.models.named(model)
    assert line is not None  # named by a walk over the catalogue's own rows
    return (policy_of(line).ladder[0], "retired")


def recall_dataset(catalogue: Catalogue, name: str, reason: str, actor: Actor) -> RecallOutcome:
    """Mark a dataset bad, in one transaction with its audit event, and report what it touched."""
    reason = (reason or "").strip()
    if not reason:
        raise UserError("a recall needs a reason a person can act on", place="--reason")
    with UnitOfWork(catalogue) as uow:
        authorise(uow, actor, "dataset.recall", place="recall")
        dataset = uow.datasets.named(name)
        if dataset is None:
            raise NotFound(f"unknown dataset {name!r}{did_you_mean(name, uow.names.datasets())}",
                           place="dataset")
        if dataset.recalled_at is not None:
            raise UserError(f"dataset {name!r} was already recalled on "
                            f"{walks.utc_iso(dataset.recalled_at)} by {dataset.recalled_by}: "
                            f"{dataset.recall_reason}", place="dataset")
        now = utc_now()
        uow.datasets.recall(dataset, at=now, reason=reason, by=actor.name)
        datasets, versions, to_act = _downstream_of_dataset(uow, dataset)
        feeds, readers, consumers = _flagged_through_feeds(uow, dataset, versions)
        sequence = uow.audit.append(actor.name, "dataset.recall", dataset_id(name), {
            "reason": reason,
            "downstream_datasets": list(datasets),
            "downstream_versions": [version_id(v.model, v.version) for v in versions],
            "holding_stages": [f"{version_id(s.model, s.version)}:{s.stage}" for s in to_act],
            **({"flagged_feeds": list(feeds),
                "feed_readers": [version_id(v.model, v.version) for v in readers],
                "flagged_consumers": list(consumers)} if feeds or consumers else {}),
        })
        uow.commit()
        return RecallOutcome(dataset=name, reason=reason, recalled_at=now.isoformat(),
                             recalled_by=actor.name, downstream_datasets=datasets,
                             downstream_versions=versions, holding_stages=to_act,
                             audit_sequence=sequence, flagged_feeds=feeds,
                             feed_readers=readers, flagged_consumers=consumers)


def recalled_names_upstream(uow: UnitOfWork, version_id: int) -> list[str]:
    """The names of the recalled datasets upstream of a version (none: an empty list)."""
    return uow.names.recalled_upstream_of_version(version_id)


def recalled_upstream(uow: UnitOfWork, version_row: t.Version) -> list[RecalledSource]:
    """Each recalled dataset upstream of a version, with the derived-from chain to it.

    For the promotion gate `lineage-complete`: an empty list means no recalled data went in.
    """
    start = walks.NodeKey("version", version_row.id)
    reached = {r.key for r in uow.lineage.walk(walks.seeds_for(start), "up")}
    facts = uow.lineage.facts(reached)
    recalled = sorted((k for k in reached if k.kind == "dataset" and facts[k].recalled),
                      key=lambda k: facts[k].name)
    if not recalled:
        return []
    # Shortest path from the version up to each recalled dataset, over the walked edges.
    depends_on: dict[walks.NodeKey, list[walks.NodeKey]] = {}
    for link in uow.lineage.links(reached, with_contracts=False):
        depends_on.setdefault(link.downstream, []).append(link.upstream)
    came_from: dict[walks.NodeKey, walks.NodeKey | None] = {start: None}
    queue = deque([start])
    while queue:
        current = queue.popleft()
        for upstream in sorted(depends_on.get(current, ())):
            if upstream not in came_from:
                came_from[upstream] = current
                queue.append(upstream)
    sources: list[RecalledSource] = []
    for key in recalled:
        chain: list[str] = []
        step: walks.NodeKey | None = key
        while step is not None:
            chain.append(node_name(facts[step]))
            step = came_from.get(step)
        row = uow.datasets.by_id(key.ref)
        assert row.recalled_at is not None  # it is among the recalled datasets
        sources.append(RecalledSource(dataset=row.name, reason=row.recall_reason or "",
                                      recalled_at=walks.utc_iso(row.recalled_at),
                                      recalled_by=row.recalled_by or "", chain=tuple(chain)))
    return sources


def downstream_of(uow: UnitOfWork, dataset: t.Dataset
                  ) -> tuple[tuple[str, ...], tuple[FlaggedVersion, ...]]:
    """Datasets and versions downstream of a dataset, each version with the stages it holds."""
    datasets, versions, _ = _downstream_of_dataset(uow, dataset)
    return datasets, versions
