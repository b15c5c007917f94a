"""The one authorisation rule every write use case asks: which roles allow which action.

A catalogue with no admin yet has no roles at all (the way a new catalogue is set up); from the
first admin on, every write checks the actor's roles against ACTIONS.
"""

from __future__ import annotations

from typing import Any

from registry.service.actors import Actor
from registry.service.roles import require_role
from registry.store.unit_of_work import UnitOfWork

# action -> the roles any one of which allows it
ACTIONS: dict[str, tuple[str, ...]] = {
    "key.create": ("admin",),
    "key.rotate": ("admin",),
    # Signs the chain as it stands; changes no deciding row, so anyone who may read may ask.
    "audit.checkpoint": ("reader",),
}


def authorise(uow: UnitOfWork, actor: Actor, action: str, **facts: Any) -> None:
    """Raise registry.errors.Forbidden unless the actor may take the action."""
    roles = ACTIONS[action]
    if any(actor.has_role(role) for role in roles):
        return
    require_role(uow, actor, roles[0], action)
