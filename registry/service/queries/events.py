"""The audit log as a person reads it: events in plain words, a page at a time, filtered by
model, dataset, person and action."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from registry.node_ids import (
    DATASET_ID,
    EVALUATION_ID,
    MODEL_ID,
    STAGE_ID,
    USER_ID,
    VERSION_ID,
)
from registry.service.queries.common import loads
from registry.store.catalogue import Catalogue
from registry.store.page_reads import EventFilter
from registry.store.unit_of_work import UnitOfWork

PAGE_SIZE = 50


@dataclass(frozen=True)
class Target:
    """What an event is about, as the pages link it."""

    model: str = ""
    version: int | None = None
    dataset: str = ""


@dataclass(frozen=True)
class EventLine:
    sequence: int
    at: str
    actor: str
    action: str
    words: str  # what happened, in plain words
    target: Target


@dataclass(frozen=True)
class EventsPage:
    events: tuple[EventLine, ...]
    total: int
    page: int
    pages: int
    chosen: EventFilter
    people: tuple[str, ...]
    actions: tuple[str, ...]


def target_of(subject: str) -> Target:
    if m := EVALUATION_ID.match(subject):
        return Target(m.group(1), int(m.group(2)), m.group(3))
    if m := VERSION_ID.match(subject):
        return Target(m.group(1), int(m.group(2)))
    if m := STAGE_ID.match(subject) or MODEL_ID.match(subject):
        return Target(m.group(1))
    if m := DATASET_ID.match(subject):
        return Target(dataset=m.group(1))
    return Target()


def _version(target: Target) -> str:
    return f"{target.model} v{target.version}"


def in_words(action: str, subject: str, details: Any) -> str:
    """One event as a sentence without its subject's internal form."""
    d = details if isinstance(details, dict) else {}
    target = target_of(subject)
    user = m.group(1) if (m := USER_ID.match(subject)) else subject
    stage = d.get("stage", "")
    waived = [w.get("gate", "") for w in d.get("waivers", []) if isinstance(w, dict)]
    stage_name = m.group(2) if (m := STAGE_ID.match(subject)) else stage
    summary: dict[str, Any] = d["summary"] if isinstance(d.get("summary"), dict) else {}
    failed = list(summary.get("failed", {})) if isinstance(summary.get("failed"), dict) else []
    words = {
        "role.grant": lambda: f"granted the {d.get('role', '')} role to {user}",
        "role.revoke": lambda: f"took the {d.get('role', '')} role from {user}",
        "model.create": lambda: f"created the model {target.model}",
        "model.policy": lambda: f"set the promotion policy of {target.model}",
        "dataset.add": lambda: f"added the dataset {target.dataset}",
        "dataset.recall": lambda: f"recalled the dataset {target.dataset}: {d.get('reason', '')}",
        "version.register": lambda: f"registered {_version(target)}",
        "version.approve": lambda: f"approved {_version(target)} for {stage}"
                                   + (f" (“{d['note']}”)" if d.get("note") else ""),
        "version.retire": lambda: f"retired {_version(target)}",
        "evaluation.add": lambda: f"evaluated {_version(target)} on {target.dataset}",
        "stage.promote": lambda: f"promoted {_version(target)} to {stage}"
                                 + (f", waiving {', '.join(waived)}" if waived else ""),
        "stage.refuse": lambda: f"tried to promote {_version(target)} to {stage}: refused"
                                + (f" by {', '.join(failed)}" if failed else ""),
        "stage.rollback": lambda: f"rolled {target.model} {stage_name} back from "
                                  f"v{d.get('from_version', '?')}",
        "token.create": lambda: f"issued an API token for {d.get('user', user)}",
        "token.revoke": lambda: f"revoked an API token of {d.get('user', user)}",
    }.get(action)
    return words() if words else f"{action.replace('.', ' ')} {subject}"


def events_page(catalogue: Catalogue, chosen: EventFilter, page: int = 1) -> EventsPage:
    with UnitOfWork(catalogue, write=False) as uow:
        rows, total = uow.pages.audit_events(chosen, (page - 1) * PAGE_SIZE, PAGE_SIZE)
        events = tuple(EventLine(r.sequence, r.occurred_at, r.actor, r.action,
                                 in_words(r.action, r.subject, loads(r.details_json, {})),
                                 target_of(r.subject)) for r in rows)
        return EventsPage(events, total, page, max(1, -(-total // PAGE_SIZE)), chosen,
                          tuple(uow.pages.audit_people()), tuple(uow.pages.audit_actions()))
