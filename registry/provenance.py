"""PROV-JSON for a lineage graph, after the W3C PROV data model (PROV-DM) and PROV-JSON.

Datasets and versions are entities; each version's registration (its training run as recorded)
and each stage event are activities; the people who acted are agents. Sources: PROV-DM, W3C
Recommendation 30 April 2013, sections 5.1-5.3; PROV-JSON, W3C Member Submission 24 April 2013.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass
from typing import Any

NAMESPACE = "urn:lockkeeper:"
PREFIX = "lk"


@dataclass(frozen=True)
class ProvEntity:
    id: str  # a lineage node id: dataset/NAME, model/M/version/N, feed/NAME or consumer/NAME
    kind: str  # dataset | version | feed | consumer
    label: str
    created_at: str
    created_by: str
    recalled: bool = False
    recall_reason: str = ""


@dataclass(frozen=True)
class ProvUse:
    version: str  # node id of the version whose registration used the dataset
    dataset: str
    relation: str  # trained-on | evaluated-on | reads-feed (then `dataset` names the feed)


@dataclass(frozen=True)
class ProvDerivation:
    derived: str
    source: str
    relation: str  # derived-from | parent-version | built-from | reads-output-of


@dataclass(frozen=True)
class ProvStageEvent:
    id: int
    version: str
    stage: str
    event: str
    at: str
    by: str


def _name(node_id: str) -> str:
    return f"{PREFIX}:{node_id}"


def _agent(user: str) -> str:
    return f"{PREFIX}:user/{user}"


def _qualified(value: str) -> dict[str, str]:
    return {"$": value, "type": "prov:QUALIFIED_NAME"}


def _registration(version: str) -> str:
    return f"{PREFIX}:registration/{version}"


def prov_document(entities: Iterable[ProvEntity], uses: Iterable[ProvUse],
                  derivations: Iterable[ProvDerivation],
                  stage_events: Iterable[ProvStageEvent]) -> dict[str, Any]:
    """A PROV-JSON document (a plain dict) for the given part of the catalogue."""
    document: dict[str, Any] = {"prefix": {PREFIX: NAMESPACE}}
    sections: dict[str, dict[str, Any]] = {key: {} for key in (
        "entity", "activity", "agent", "used", "wasGeneratedBy", "wasDerivedFrom",
        "wasAttributedTo", "wasAssociatedWith")}
    counter = iter(range(1, 1_000_000_000))

    def relation(section: str, body: dict[str, Any]) -> None:
        sections[section][f"_:{section}{next(counter)}"] = body

    def agent(user: str) -> str:
        name = _agent(user or "unknown")
        sections["agent"].setdefault(name, {"prov:type": _qualified("prov:Person"),
                                            "prov:label": user or "unknown"})
        return name

    entities = list(entities)
    versions = {e.id for e in entities if e.kind == "version"}
    for entity in entities:
        body: dict[str, Any] = {"prov:type": _qualified(f"{PREFIX}:{entity.kind}"),
                                "prov:label": entity.label, f"{PREFIX}:recalled": entity.recalled}
        if entity.recall_reason:
            body[f"{PREFIX}:recall_reason"] = entity.recall_reason
        sections["entity"][_name(entity.id)] = body
        relation("wasAttributedTo", {"prov:entity": _name(entity.id),
                                     "prov:agent": agent(entity.created_by)})
        if entity.kind == "version":
            # The registration stands for the training run whose result the version records.
            activity = _registration(entity.id)
            sections["activity"][activity] = {
                "prov:type": _qualified(f"{PREFIX}:registration"),
                "prov:label": f"registration of {entity.label}",
                "prov:startTime": entity.created_at, "prov:endTime": entity.created_at}
            relation("wasGeneratedBy", {"prov:entity": _name(entity.id),
                                        "prov:activity": activity, "prov:time": entity.created_at})
            relation("wasAssociatedWith", {"prov:activity": activity,
                                           "prov:agent": agent(entity.created_by)})
    for use in uses:
        if use.version in versions:
            relation("used", {"prov:activity": _registration(use.version),
                              "prov:entity": _name(use.dataset),
                              "prov:role": _qualified(f"{PREFIX}:{use.relation}")})
    for derivation in derivations:
        body = {"prov:generatedEntity": _name(derivation.derived),
                "prov:usedEntity": _name(derivation.source),
                "prov:type": _qualified(f"{PREFIX}:{derivation.relation}")}
        if derivation.derived in versions:
            body["prov:activity"] = _registration(derivation.derived)
        relation("wasDerivedFrom", body)
    for event in stage_events:
        activity = f"{PREFIX}:stage-event/{event.id}"
        sections["activity"][activity] = {
            "prov:type": _qualified(f"{PREFIX}:stage-event"),
            "prov:label": f"{event.version} {event.event} {event.stage}",
            f"{PREFIX}:stage": event.stage, f"{PREFIX}:event": event.event,
            "prov:startTime": event.at, "prov:endTime": event.at}
        relation("used", {"prov:activity": activity, "prov:entity": _name(event.version),
                          "prov:time": event.at})
        relation("wasAssociatedWith", {"prov:activity": activity, "prov:agent": agent(event.by)})
    document.update({key: value for key, value in sections.items() if value})
    return document
