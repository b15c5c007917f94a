"""Use cases on model lines: create, list, show, status."""

from __future__ import annotations

from dataclasses import dataclass, field

from registry.errors import AlreadyExists, NotFound
from registry.moments import utc_iso
from registry.names import check_name
from registry.node_ids import model_id
from registry.service.actors import Actor
from registry.service.authorisation import authorise
from registry.service.recall import recalled_names_upstream
from registry.store import tables as t
from registry.store.catalogue import Catalogue
from registry.store.unit_of_work import UnitOfWork, utc_now
from registry.suggest import did_you_mean


@dataclass(frozen=True)
class ModelSummary:
    name: str
    description: str
    created_at: str
    created_by: str
    versions: int
    stages: dict[str, list[int]]


@dataclass(frozen=True)
class VersionSummary:
    number: int
    document_digest: str
    document_kind: str
    description: str
    author: str
    code_revision: str
    created_at: str
    created_by: str
    stages: list[str]
    recalled_upstream: list[str] = field(default_factory=list)


@dataclass(frozen=True)
class ModelDetail:
    model: ModelSummary
    versions: list[VersionSummary]


def find_model(uow: UnitOfWork, name: str) -> t.Model:
    model = uow.models.named(name)
    if model is None:
        raise NotFound(f"unknown model {name!r}{did_you_mean(name, uow.names.models())}",
                       place="model")
    return model


def find_version(uow: UnitOfWork, model: t.Model, number: int) -> t.Version:
    version = uow.models.version(model.id, number)
    if version is None:
        numbers = uow.names.version_numbers(model.id)
        existing = (f"its versions are {', '.join(f'v{n}' for n in numbers)}" if numbers
                    else "it has no versions yet")
        raise NotFound(f"model {model.name!r} has no version {number}; {existing}",
                       place="version")
    return version


def stages_by_version(uow: UnitOfWork, model: t.Model) -> dict[int, list[str]]:
    held: dict[int, list[str]] = {}
    for number, stage in uow.models.held_stages(model.id):
        held.setdefault(number, []).append(stage)
    return held


def holders_by_stage(uow: UnitOfWork, model: t.Model) -> dict[str, list[int]]:
    holders: dict[str, list[int]] = {}
    for number, stages in sorted(stages_by_version(uow, model).items()):
        for stage in stages:
            holders.setdefault(stage, []).append(number)
    return holders


def _summary(uow: UnitOfWork, model: t.Model) -> ModelSummary:
    count = uow.models.version_count(model.id)
    return ModelSummary(name=model.name, description=model.description,
                        created_at=utc_iso(model.created_at), created_by=model.created_by,
                        versions=count, stages=holders_by_stage(uow, model))


def create_model(catalogue: Catalogue, name: str, description: str, actor: Actor) -> ModelSummary:
    check_name(name, what="model")
    with UnitOfWork(catalogue) as uow:
        authorise(uow, actor, "model.create")
        existing = uow.models.named(name)
        if existing is not None:
            raise AlreadyExists(f"a model named {name!r} already exists", place="model")
        model = t.Model(name=name, description=description, created_at=utc_now(),
                        created_by=actor.name)
        uow.models.add(model)
        uow.audit.append(actor.name, "model.create", model_id(name), {"description": description})
        summary = _summary(uow, model)
        uow.commit()
        return summary


def list_models(catalogue: Catalogue) -> list[ModelSummary]:
    with UnitOfWork(catalogue, write=False) as uow:
        models = uow.models.all()
        return [_summary(uow, model) for model in models]


def show_model(catalogue: Catalogue, name: str) -> ModelDetail:
    with UnitOfWork(catalogue, write=False) as uow:
        model = find_model(uow, name)
        held = stages_by_version(uow, model)
        versions = uow.models.versions(model.id)
        return ModelDetail(
            model=_summary(uow, model),
            versions=[VersionSummary(
                number=v.number, document_digest=v.document_digest, document_kind=v.document_kind,
                description=v.description, author=v.author, code_revision=v.code_revision,
                created_at=utc_iso(v.created_at), created_by=v.created_by,
                stages=held.get(v.number, []),
                recalled_upstream=recalled_names_upstream(uow, v.id))
                for v in versions])
