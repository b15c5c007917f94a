"""Consumers as declared readers of a model's output: add, update (numbered reader schemas),
remove, list, and check a proposed reader schema against the output of every stage holder.

Sculley et al., Hidden Technical Debt in Machine Learning Systems (2015): undeclared consumers
break silently; a declared one is checked by `output-readable` before any version moves.
"""

from __future__ import annotations

from datetime import UTC, datetime
from typing import Any

from registry import schema as avro
from registry.errors import AlreadyExists, NotFound
from registry.names import check_name
from registry.node_ids import contract_id
from registry.service import evidence_sources as sources
from registry.service.actors import Actor
from registry.service.authorisation import authorise
from registry.service.feeds import read_schema
from registry.service.models import find_model
from registry.store import tables as t
from registry.store.catalogue import Catalogue
from registry.store.unit_of_work import UnitOfWork, utc_now


def find_consumer(uow: UnitOfWork, name: str) -> t.Consumer:
    check_name(name, what="consumer")
    consumer = uow.consumers.named(name)
    if consumer is None:
        raise NotFound(f"unknown consumer {name!r}; declare it with `lockkeeper consumer add`",
                       place="consumer")
    return consumer


def _iso(moment: datetime) -> str:
    return (moment if moment.tzinfo else moment.replace(tzinfo=UTC)).isoformat()


def _describe(uow: UnitOfWork, consumer: t.Consumer, model: str) -> dict[str, Any]:
    schemas = uow.consumers.schemas(consumer)
    current = schemas[-1]
    return {"consumer": consumer.name, "model": model, "owner": consumer.owner,
            "schema_version": current.number, "fingerprint": current.fingerprint,
            "created_at": _iso(consumer.created_at), "created_by": consumer.created_by,
            "versions": [{"schema_version": s.number, "fingerprint": s.fingerprint,
                          "note": s.note, "created_at": _iso(s.created_at),
                          "created_by": s.created_by} for s in schemas]}


def _model_name(uow: UnitOfWork, consumer: t.Consumer) -> str:
    return uow.consumers.model_name(consumer)


def add_consumer(catalogue: Catalogue, name: str, model: str, schema_text: str, actor: Actor, *,
                 owner: str = "", note: str = "", place: str = "--schema") -> dict[str, Any]:
    """Declare a reader of `model`'s output, with its first reader schema."""
    check_name(name, what="consumer")
    _, normalised, fingerprint = read_schema(schema_text, place=place)
    with UnitOfWork(catalogue) as uow:
        authorise(uow, actor, "consumer.add")
        line = find_model(uow, model)
        if uow.consumers.named(name) is not None:
            raise AlreadyExists(f"a consumer named {name!r} already exists; change its reader "
                                "schema with `lockkeeper consumer update`", place="consumer")
        consumer = uow.consumers.add(t.Consumer(name=name, model_id=line.id, owner=owner,
                                                created_at=utc_now(), created_by=actor.name))
        uow.consumers.add_schema(t.ConsumerSchema(
            consumer_id=consumer.id, number=1, schema_json=normalised, fingerprint=fingerprint,
            note=note, created_at=utc_now(), created_by=actor.name))
        uow.audit.append(actor.name, "consumer.add", contract_id("consumer", name),
                         {"model": line.name, "owner": owner, "schema_version": 1,
                          "fingerprint": fingerprint})
        document = _describe(uow, consumer, line.name)
        uow.commit()
        return {**document, "changed": True}


def update_consumer(catalogue: Catalogue, name: str, schema_text: str, actor: Actor, *,
                    note: str = "", place: str = "--schema") -> dict[str, Any]:
    """Record the consumer's next reader schema; the current one again changes nothing."""
    _, normalised, fingerprint = read_schema(schema_text, place=place)
    with UnitOfWork(catalogue) as uow:
        authorise(uow, actor, "consumer.update")
        consumer = find_consumer(uow, name)
        model = _model_name(uow, consumer)
        current = uow.consumers.current_schema(consumer)
        if current.fingerprint == fingerprint:
            return {**_describe(uow, consumer, model), "changed": False,
                    "summary": f"identical to reader schema v{current.number}: nothing changed"}
        number = uow.consumers.next_schema_number(consumer)
        uow.consumers.add_schema(t.ConsumerSchema(
            consumer_id=consumer.id, number=number, schema_json=normalised,
            fingerprint=fingerprint, note=note, created_at=utc_now(), created_by=actor.name))
        uow.audit.append(actor.name, "consumer.update", contract_id("consumer", name),
                         {"model": model, "schema_version": number, "fingerprint": fingerprint,
                          "note": note})
        document = _describe(uow, consumer, model)
        uow.commit()
        return {**document, "changed": True}


def remove_consumer(catalogue: Catalogue, name: str, actor: Actor) -> dict[str, Any]:
    with UnitOfWork(catalogue) as uow:
        authorise(uow, actor, "consumer.remove")
        consumer = find_consumer(uow, name)
        model = _model_name(uow, consumer)
        last = uow.consumers.current_schema(consumer)
        uow.consumers.remove(consumer)
        uow.audit.append(actor.name, "consumer.remove", contract_id("consumer", name),
                         {"model": model, "last_schema_version": last.number,
                          "fingerprint": last.fingerprint})
        uow.commit()
        return {"consumer": name, "model": model, "removed": True}


def list_consumers(catalogue: Catalogue) -> dict[str, Any]:
    with UnitOfWork(catalogue, write=False) as uow:
        return {"consumers": [_describe(uow, consumer, model)
                              for consumer, model in uow.consumers.every()]}


def show_consumer(catalogue: Catalogue, name: str) -> dict[str, Any]:
    with UnitOfWork(catalogue, write=False) as uow:
        consumer = find_consumer(uow, name)
        return _describe(uow, consumer, _model_name(uow, consumer))


def check_consumer_schema(catalogue: Catalogue, name: str, schema_text: str,
                          place: str = "NEW_READER") -> dict[str, Any]:
    """Which versions, stage by stage, write output the proposed reader schema could not read
    (Avro Schema Resolution, the proposed schema as reader); changes nothing. It fails when a
    holder of an exclusive stage writes output it could not read."""
    reader, _, fingerprint = read_schema(schema_text, place=place)
    with UnitOfWork(catalogue, write=False) as uow:
        consumer = find_consumer(uow, name)
        model = _model_name(uow, consumer)
        stages: dict[str, dict[str, Any]] = {}
        blocking = []
        for version, stage, exclusive in uow.consumers.holdings(consumer.model_id):
            entry = stages.setdefault(stage, {"stage": stage, "exclusive": bool(exclusive),
                                              "versions": []})
            output = sources.output_schema(version)
            if output is None:
                reads, problems = False, [{"path": "/", "rule": "no-output-schema",
                                           "message": f"version {version.number} declares no "
                                                      "output schema"}]
            else:
                resolution = avro.resolve(reader, output)
                reads = resolution.compatible
                problems = [{"path": p.path, "rule": p.rule, "message": p.message}
                            for p in resolution.problems]
            entry["versions"].append({"version": version.number, "reads": reads,
                                      "problems": problems})
            if exclusive and not reads:
                blocking.append(f"{model}@{version.number}:{stage}")
        listed = list(stages.values())
        if blocking:
            summary = (f"the proposed reader of {consumer.name} could not read the output of "
                       f"{', '.join(blocking)}")
        else:
            summary = (f"the proposed reader of {consumer.name} reads the output of every "
                       "holder of an exclusive stage")
        return {"consumer": consumer.name, "model": model, "fingerprint": fingerprint,
                "passed": not blocking, "blocking": blocking, "summary": summary,
                "stages": listed,
                "unreadable": [{"stage": e["stage"], "versions": [v["version"] for v in
                                                                  e["versions"] if not v["reads"]]}
                               for e in listed if any(not v["reads"] for v in e["versions"])]}


