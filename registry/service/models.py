"""Use cases on model lines: create, list, show, status."""

from __future__ import annotations

from dataclasses import dataclass, field

from sqlalchemy import func, select

from registry.errors import AlreadyExists, NotFound
from registry.moments import utc_iso
from registry.names import check_name
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
    model = uow.session.execute(select(t.Model).where(t.Model.name == name)).scalar_one_or_none()
    if model is None:
        raise NotFound(f"unknown model {name!r}{did_you_mean(name, uow.names.models())}",
                       place="model")
    return model


def find_version(uow: UnitOfWork, model: t.Model, number: int) -> t.Version:
    version = uow.session.execute(
        select(t.Version).where(t.Version.model_id == model.id, t.Version.number == number)
    ).scalar_one_or_none()
    if version is None:
        numbers = uow.names.version_numbers(model.id)
        existing = (f"its versions are {', '.join(f'v{n}' for n in numbers)}" if numbers
                    else "it has no versions yet")
        raise NotFound(f"model {model.name!r} has no version {number}; {existing}",
                       place="version")
    return version


def stages_by_version(uow: UnitOfWork, model: t.Model) -> dict[int, list[str]]:
    rows = uow.session.execute(
        select(t.Version.number, t.StageHolding.stage)
        .join(t.StageHolding, t.StageHolding.version_id == t.Version.id)
        .where(t.StageHolding.model_id == model.id)
        .order_by(t.StageHolding.since)
    ).all()
    held: dict[int, list[str]] = {}
    for number, stage in rows:
        held.setdefault(number, []).append(stage)
    return held


def holders_by_stage(uow: UnitOfWork, model: t.Model) -> dict[str, list[int]]:
    holders: dict[str, list[int]] = {}
    for number, stages in sorted(stages_by_version(uow, model).items()):
        for stage in stages:
            holders.setdefault(stage, []).append(number)
    return holders


def _summary(uow: UnitOfWork, model: t.Model) -> ModelSummary:
    count = uow.session.execute(
        select(func.count()).select_from(t.Version).where(t.Version.model_id == model.id)
    ).scalar_one()
    return ModelSummary(name=model.name, description=model.description,
                        created_at=utc_iso(model.created_at), created_by=model.created_by,
                        versions=count, stages=holders_by_stage(uow, model))


def create_model(catalogue: Catalogue, name: str, description: str, actor: Actor) -> ModelSummary:
    check_name(name, what="model")
    with UnitOfWork(catalogue) as uow:
        authorise(uow, actor, "model.create")
        existing = uow.session.execute(
            select(t.Model).where(t.Model.name == name)).scalar_one_or_none()
        if existing is not None:
            raise AlreadyExists(f"a model named {name!r} already exists", place="model")
        model = t.Model(name=name, description=description, created_at=utc_now(),
                        created_by=actor.name)
        uow.session.add(model)
        uow.session.flush()
        uow.audit.append(actor.name, "model.create", f"model/{name}", {"description": description})
        summary = _summary(uow, model)
        uow.commit()
        return summary


def list_models(catalogue: Catalogue) -> list[ModelSummary]:
    with UnitOfWork(catalogue, write=False) as uow:
        models = uow.session.execute(select(t.Model).order_by(t.Model.name)).scalars().all()
        return [_summary(uow, model) for model in models]


def show_model(catalogue: Catalogue, name: str) -> ModelDetail:
    with UnitOfWork(catalogue, write=False) as uow:
        model = find_model(uow, name)
        held = stages_by_version(uow, model)
        versions = uow.session.execute(
            select(t.Version).where(t.Version.model_id == model.id).order_by(t.Version.number)
        ).scalars().all()
        return ModelDetail(
            model=_summary(uow, model),
            versions=[VersionSummary(
                number=v.number, document_digest=v.document_digest, document_kind=v.document_kind,
                description=v.description, author=v.author, code_revision=v.code_revision,
                created_at=utc_iso(v.created_at), created_by=v.created_by,
                stages=held.get(v.number, []),
                recalled_upstream=recalled_names_upstream(uow, v.id))
                for v in versions])
