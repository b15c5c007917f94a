"""The front page: every model with who holds its stages (flagged when their lineage reaches a
recalled dataset), every dataset with its state, and the newest events."""

from __future__ import annotations

from dataclasses import dataclass

from registry.gates.policy import RETIRED
from registry.service import lineage as lineage_service
from registry.service.gatekeeping import policy_of
from registry.service.queries.events import EventLine, events_page
from registry.service.queries.recalls import recalled_names
from registry.store.catalogue import Catalogue
from registry.store.page_reads import EventFilter
from registry.store.unit_of_work import UnitOfWork

RECENT_EVENTS = 8
MODEL_STATES = ("", "held", "flagged")
DATASET_STATES = ("", "in-use", "flagged", "recalled")


@dataclass(frozen=True)
class HolderFlag:
    stage: str
    version: int
    recalled_upstream: tuple[str, ...]


@dataclass(frozen=True)
class ModelLine:
    name: str
    description: str
    versions: int
    stages: tuple[tuple[str, tuple[HolderFlag, ...]], ...]  # top of the ladder first

    @property
    def holders(self) -> tuple[HolderFlag, ...]:
        return tuple(h for _, group in self.stages for h in group)

    @property
    def flagged(self) -> bool:
        return any(h.recalled_upstream for h in self.holders)


@dataclass(frozen=True)
class DatasetLine:
    name: str
    role: str
    rows: int
    state: str  # in-use | flagged | recalled


@dataclass(frozen=True)
class CataloguePage:
    models: tuple[ModelLine, ...]
    datasets: tuple[DatasetLine, ...]
    events: tuple[EventLine, ...]
    total_events: int
    name: str
    model_state: str
    dataset_state: str
    all_models: int
    all_datasets: int


def catalogue_page(catalogue: Catalogue, name: str = "", model_state: str = "",
                   dataset_state: str = "") -> CataloguePage:
    with UnitOfWork(catalogue, write=False) as uow:
        flagged = {k.ref for k in lineage_service.flagged_keys(uow) if k.kind == "dataset"}
        counts = uow.pages.version_counts()
        models = []
        all_models = uow.models.all()
        for model in all_models:
            versions = {v.number: v for v in uow.models.versions(model.id)}
            recalled = {}
            holders = []
            for holding, number in uow.pages.holdings(model.id):
                if number not in recalled:
                    recalled[number] = recalled_names(uow, versions[number])
                holders.append(HolderFlag(holding.stage, number, recalled[number]))
            order = [*reversed(policy_of(model).ladder), RETIRED]
            groups: dict[str, list[HolderFlag]] = {}
            for holder in sorted(holders, key=lambda h: (
                    order.index(h.stage) if h.stage in order else len(order), h.version)):
                groups.setdefault(holder.stage, []).append(holder)
            models.append(ModelLine(model.name, model.description, counts.get(model.id, 0),
                                    tuple((stage, tuple(g)) for stage, g in groups.items())))
        all_datasets = uow.datasets.all()
        datasets = [DatasetLine(d.name, d.role, d.rows,
                                "recalled" if d.recalled_at is not None
                                else "flagged" if d.id in flagged else "in-use")
                    for d in all_datasets]
    needle = name.strip().lower()
    models = [m for m in models if needle in m.name.lower()
              and (model_state == "" or (model_state == "held" and m.holders)
                   or (model_state == "flagged" and m.flagged))]
    datasets = [d for d in datasets if needle in d.name.lower()
                and dataset_state in ("", d.state)]
    recent = events_page(catalogue, EventFilter(), 1)
    return CataloguePage(tuple(models), tuple(datasets), recent.events[:RECENT_EVENTS],
                         recent.total, name, model_state, dataset_state, len(all_models),
                         len(all_datasets))
