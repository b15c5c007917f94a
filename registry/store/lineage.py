"""Lineage walks that run in the database as recursive CTEs, on SQLite and PostgreSQL alike.

Each walk follows one indexed edge table, so its cost grows with the answer, not the catalogue.
"""

from __future__ import annotations

from collections.abc import Iterable

from sqlalchemy import literal, select
from sqlalchemy.orm import Session

from registry.store import tables as t


def _dataset_walk(session: Session, start_ids: Iterable[int], *, downward: bool,
                  depth: int | None = None) -> dict[int, int]:
    """Datasets reachable over derived-from edges: id -> distance (the starts at 0)."""
    starts = sorted(set(start_ids))
    if not starts:
        return {}
    edges = t.DatasetParent.__table__
    source, target = (edges.c.parent_id, edges.c.child_id) if downward else \
        (edges.c.child_id, edges.c.parent_id)
    seed = select(t.Dataset.id.label("id"), literal(0).label("distance")) \
        .where(t.Dataset.id.in_(starts))
    walk = seed.cte("walk", recursive=True)
    step = select(target.label("id"), (walk.c.distance + 1).label("distance")) \
        .select_from(edges.join(walk, source == walk.c.id))
    if depth is not None:
        step = step.where(walk.c.distance < depth)
    walk = walk.union(step)
    rows = session.execute(select(walk.c.id, walk.c.distance))
    found: dict[int, int] = {}
    for dataset_id, distance in rows:
        if dataset_id not in found or distance < found[dataset_id]:
            found[dataset_id] = distance
    return found


def upstream_datasets(session: Session, dataset_ids: Iterable[int],
                      depth: int | None = None) -> dict[int, int]:
    return _dataset_walk(session, dataset_ids, downward=False, depth=depth)


def downstream_datasets(session: Session, dataset_ids: Iterable[int],
                        depth: int | None = None) -> dict[int, int]:
    return _dataset_walk(session, dataset_ids, downward=True, depth=depth)


def derivation_chain(session: Session, ancestor_id: int, descendants: set[int]) -> list[int]:
    """The derived-from path from an ancestor down to the nearest of `descendants`, ancestor
    first (a breadth-first walk; derived-from graphs around one version are small)."""
    if ancestor_id in descendants:
        return [ancestor_id]
    parents_of: dict[int, int] = {ancestor_id: ancestor_id}
    frontier = [ancestor_id]
    while frontier:
        children = session.execute(
            select(t.DatasetParent.parent_id, t.DatasetParent.child_id)
            .where(t.DatasetParent.parent_id.in_(frontier))).all()
        frontier = []
        for parent, child in children:
            if child in parents_of:
                continue
            parents_of[child] = parent
            if child in descendants:
                path = [child]
                while path[-1] != ancestor_id:
                    path.append(parents_of[path[-1]])
                return list(reversed(path))
            frontier.append(child)
    return [ancestor_id]
