"""The lineage graph inside the unit of work's transaction: walks over datasets, versions and
stages (registry/store/lineage.py) and over feeds and consumers (contract_lineage.py)."""

from __future__ import annotations

from collections.abc import Iterable, Mapping

from sqlalchemy.orm import Session

from registry.store import contract_lineage as contracts
from registry.store import lineage as walks
from registry.store.lineage import Direction, Link, NodeFacts, NodeKey, Reached, Seeds


class LineageRepository:
    def __init__(self, session: Session) -> None:
        self._session = session

    def walk(self, seeds: Seeds, direction: Direction,
             max_depth: int | None = None) -> list[Reached]:
        """Datasets, versions and stages reached from the seeds (no feeds or consumers)."""
        return walks.walk(self._session, seeds, direction, max_depth)

    def expand(self, reached: Mapping[NodeKey, int | None], direction: Direction,
               max_depth: int | None = None) -> dict[NodeKey, int | None]:
        """A walk's nodes plus what feeds and consumers connect them to."""
        return contracts.expand(self._session, reached, direction, max_depth)

    def facts(self, keys: Iterable[NodeKey]) -> dict[NodeKey, NodeFacts]:
        """Names, dates and recall marks of any nodes, feeds and consumers included."""
        keys = list(keys)
        return {**walks.facts_of(self._session, keys),
                **contracts.contract_facts(self._session, keys)}

    def links(self, keys: Iterable[NodeKey], *, with_contracts: bool = True) -> list[Link]:
        """Every edge whose two ends are both among the keys."""
        keys = list(keys)
        found = walks.links_among(self._session, keys)
        return found + contracts.contract_links(self._session, keys) if with_contracts else found

    def stage_exists(self, model_id: int, stage: str) -> bool:
        return walks.stage_exists(self._session, model_id, stage)

    def contract_key(self, kind: str, name: str) -> NodeKey | None:
        """The node of a feed or consumer by name, or None."""
        find = contracts.feed_key if kind == "feed" else contracts.consumer_key
        return find(self._session, name)
