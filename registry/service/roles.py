"""Roles kept in the catalogue for local users and tokens: reader, publisher, approver, admin."""

from __future__ import annotations

from registry.errors import NotFound, UserError
from registry.names import check_name
from registry.node_ids import user_id
from registry.service.actors import ROLES, Actor
from registry.service.authorisation import authorise, is_bootstrap, require_first_admin
from registry.store.catalogue import Catalogue
from registry.store.unit_of_work import UnitOfWork, utc_now


def load_actor(catalogue: Catalogue, name: str) -> Actor:
    """A local user acts with every role the catalogue grants them."""
    with UnitOfWork(catalogue, write=False) as uow:
        return Actor(name=name, roles=uow.roles.held_by(name))


def grant_role(catalogue: Catalogue, user: str, role: str, actor: Actor) -> dict:
    """Give a user a role. Only an admin may, except for the very first admin of a catalogue."""
    check_name(user, what="user")
    if role not in ROLES:
        raise UserError(f"unknown role {role!r}; roles are {', '.join(ROLES)}", place="role")
    with UnitOfWork(catalogue) as uow:
        require_first_admin(uow, role)
        bootstrap = is_bootstrap(uow)
        authorise(uow, actor, "role.grant")
        exists = uow.roles.is_granted(user, role)
        if not exists:
            uow.roles.grant(user, role, at=utc_now(), by=actor.name)
            uow.audit.append(actor.name, "role.grant", user_id(user),
                             {"role": role, "bootstrap": bootstrap})
        uow.commit()
        return {"user": user, "role": role, "granted": not exists}


def revoke_role(catalogue: Catalogue, user: str, role: str, actor: Actor) -> dict:
    with UnitOfWork(catalogue) as uow:
        authorise(uow, actor, "role.revoke")
        if not uow.roles.revoke(user, role):
            raise NotFound(f"{user} does not hold the role {role!r}", place="role")
        uow.audit.append(actor.name, "role.revoke", user_id(user), {"role": role})
        uow.commit()
        return {"user": user, "role": role, "revoked": True}


def list_roles(catalogue: Catalogue) -> dict[str, list[str]]:
    with UnitOfWork(catalogue, write=False) as uow:
        return uow.roles.by_user()
