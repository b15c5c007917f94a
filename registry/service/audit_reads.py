"""Reading the audit log for people: the events a filter selects, newest first."""

from __future__ import annotations

from datetime import UTC, datetime
from typing import Any

from registry.errors import NotFound, UserError
from registry.moments import parse_moment
from registry.store.audit_repository import AuditFilter
from registry.store.catalogue import Catalogue
from registry.store.unit_of_work import UnitOfWork, utc_now
from registry.suggest import did_you_mean

MAX_LIMIT = 10_000


def parse_since(text: str | None, *, now: datetime | None = None) -> str | None:
    """`7d`, `12h`, `30m` ago, or an ISO 8601 date or time (UTC when no offset is given), as the
    ISO form stored events compare with."""
    if text is None:
        return None
    moment = parse_moment(text, now=now or utc_now(), later=False, place="--since")
    return moment.astimezone(UTC).isoformat(timespec="microseconds")


def read_audit_log(catalogue: Catalogue, wanted: AuditFilter) -> dict[str, Any]:
    """`{"events": [...]}`, newest first. A model or dataset that does not exist is named with
    the closest ones that do, rather than answered with an empty list."""
    if not 1 <= wanted.limit <= MAX_LIMIT:
        raise UserError(f"--limit must be between 1 and {MAX_LIMIT}", place="--limit")
    with UnitOfWork(catalogue, write=False) as uow:
        if wanted.model is not None:
            from registry.service.models import find_model

            find_model(uow, wanted.model)
        if wanted.dataset is not None:
            from registry.service.datasets import find_dataset

            find_dataset(uow, wanted.dataset)
        events = uow.audit_events.newest(wanted)
        if (not events and wanted.actor is not None
                and wanted.actor not in uow.audit_events.actors()):
            raise NotFound(f"no event by {wanted.actor!r}"
                           f"{did_you_mean(wanted.actor, uow.audit_events.actors())}",
                           place="--actor")
        if not events and wanted.action is not None:
            actions = uow.audit_events.actions()
            families = {action.split(".")[0] for action in actions}
            if wanted.action not in {*actions, *families}:
                raise NotFound(f"no event with action {wanted.action!r}"
                               f"{did_you_mean(wanted.action, [*actions, *families])}",
                               place="--action")
    return {"events": events}
