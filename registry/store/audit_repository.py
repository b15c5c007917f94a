"""Reading the audit log: the stored events, newest first, narrowed by what a person asks for."""

from __future__ import annotations

import json
from dataclasses import dataclass
from typing import Any

from sqlalchemy import or_, select
from sqlalchemy.orm import Session

from registry.node_ids import dataset_id, model_id
from registry.store import tables as t


@dataclass(frozen=True)
class AuditFilter:
    """Each field narrows the log; None leaves it open. An action without a dot (`stage`) names
    the family of actions it starts (`stage.promote`, `stage.rollback` ...)."""

    model: str | None = None
    dataset: str | None = None
    actor: str | None = None
    action: str | None = None
    since: str | None = None  # ISO 8601 UTC, compared with the stored time
    limit: int = 50


class AuditEventRepository:
    def __init__(self, session: Session) -> None:
        self._session = session

    def newest(self, wanted: AuditFilter) -> list[dict[str, Any]]:
        query = select(t.AuditEvent).order_by(t.AuditEvent.sequence.desc()).limit(wanted.limit)
        if wanted.model is not None:
            subject = model_id(wanted.model)
            query = query.where(or_(t.AuditEvent.subject == subject,
                                    t.AuditEvent.subject.startswith(subject + "/",
                                                                    autoescape=True)))
        if wanted.dataset is not None:
            subject = dataset_id(wanted.dataset)
            query = query.where(or_(t.AuditEvent.subject == subject,
                                    t.AuditEvent.subject.endswith(
                                        f"/evaluation/{wanted.dataset}", autoescape=True)))
        if wanted.actor is not None:
            query = query.where(t.AuditEvent.actor == wanted.actor)
        if wanted.action is not None:
            query = query.where(
                t.AuditEvent.action == wanted.action if "." in wanted.action
                else t.AuditEvent.action.startswith(wanted.action + ".", autoescape=True))
        if wanted.since is not None:
            query = query.where(t.AuditEvent.occurred_at >= wanted.since)
        return [{"sequence": event.sequence, "at": event.occurred_at, "actor": event.actor,
                 "action": event.action, "subject": event.subject,
                 "details": json.loads(event.details_json), "hash": event.hash}
                for event in self._session.execute(query).scalars()]

    def actors(self) -> list[str]:
        return list(self._session.execute(select(t.AuditEvent.actor).distinct()).scalars())

    def actions(self) -> list[str]:
        return list(self._session.execute(select(t.AuditEvent.action).distinct()).scalars())
