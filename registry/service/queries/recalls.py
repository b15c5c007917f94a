"""Recalls where they matter: which recalled datasets a version's lineage reaches, per page."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

from registry.service.recall import RecalledSource, recalled_upstream
from registry.store import tables as t
from registry.store.unit_of_work import UnitOfWork


@dataclass(frozen=True)
class AffectedVersion:
    version: int
    stages: tuple[str, ...]


@dataclass(frozen=True)
class RecallNotice:
    """An open recall reaching a model: the dataset, why, and which of its versions it reaches."""

    dataset: str
    reason: str
    recalled_at: str
    recalled_by: str
    versions: tuple[AffectedVersion, ...]


def recalled_sources(uow: UnitOfWork, version: t.Version) -> tuple[RecalledSource, ...]:
    return tuple(recalled_upstream(uow, version))


def recalled_names(uow: UnitOfWork, version: t.Version) -> tuple[str, ...]:
    return tuple(source.dataset for source in recalled_upstream(uow, version))


def recall_notices(uow: UnitOfWork, versions: Sequence[t.Version],
                   held: Mapping[int, Sequence[str]]) -> tuple[RecallNotice, ...]:
    found: dict[str, tuple[RecalledSource, list[AffectedVersion]]] = {}
    for version in versions:
        for source in recalled_upstream(uow, version):
            entry = found.setdefault(source.dataset, (source, []))
            entry[1].append(AffectedVersion(version.number, tuple(held.get(version.number, ()))))
    return tuple(RecallNotice(source.dataset, source.reason, source.recalled_at,
                              source.recalled_by, tuple(affected))
                 for source, affected in (found[name] for name in sorted(found)))
