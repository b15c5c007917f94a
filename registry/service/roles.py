"""Roles kept in the catalogue for local users: publisher, approver, admin."""

from __future__ import annotations

from sqlalchemy import select

from registry.errors import Forbidden, NotFound, UserError
from registry.names import check_name
from registry.service.actors import ROLES, Actor
from registry.store import tables as t
from registry.store.catalogue import Catalogue
from registry.store.unit_of_work import UnitOfWork, utc_now


def load_actor(catalogue: Catalogue, name: str) -> Actor:
    with UnitOfWork(catalogue, write=False) as uow:
        roles = uow.session.execute(
            select(t.RoleGrant.role).where(t.RoleGrant.user == name)).scalars().all()
    return Actor(name=name, roles=frozenset(roles))


def require_role(uow: UnitOfWork, actor: Actor, role: str, action: str) -> None:
    """Refuse an action to an actor without the role it needs. A catalogue with no admin yet
    has no roles at all, so anyone may act until the first admin is granted (the way a new
    catalogue is set up); from then on every write checks the actor's roles."""
    if actor.has_role(role) or not _has_any_admin(uow):
        return
    raise Forbidden(f"{action} needs the {role} role; {actor.name} does not have it",
                    place="role")


def _has_any_admin(uow: UnitOfWork) -> bool:
    return uow.session.execute(
        select(t.RoleGrant).where(t.RoleGrant.role == "admin")).first() is not None


def grant_role(catalogue: Catalogue, user: str, role: str, actor: Actor) -> dict:
    """Give a user a role. Only an admin may, except for the very first admin of a catalogue."""
    check_name(user, what="user")
    if role not in ROLES:
        raise UserError(f"unknown role {role!r}; roles are {', '.join(ROLES)}", place="role")
    with UnitOfWork(catalogue) as uow:
        bootstrap = not _has_any_admin(uow)
        if bootstrap and role != "admin":
            raise Forbidden("this catalogue has no admin yet: grant the admin role first",
                            place="role")
        if not bootstrap and not _roles(uow, actor.name) & {"admin"}:
            raise Forbidden(f"granting roles needs the admin role; {actor.name} does not have it",
                            place="role")
        exists = uow.session.get(t.RoleGrant, (user, role)) is not None
        if not exists:
            uow.session.add(t.RoleGrant(user=user, role=role, granted_at=utc_now(),
                                        granted_by=actor.name))
            uow.audit.append(actor.name, "role.grant", f"user/{user}",
                             {"role": role, "bootstrap": bootstrap})
        uow.commit()
        return {"user": user, "role": role, "granted": not exists}


def revoke_role(catalogue: Catalogue, user: str, role: str, actor: Actor) -> dict:
    with UnitOfWork(catalogue) as uow:
        if "admin" not in _roles(uow, actor.name):
            raise Forbidden(f"revoking roles needs the admin role; {actor.name} does not have it",
                            place="role")
        grant = uow.session.get(t.RoleGrant, (user, role))
        if grant is None:
            raise NotFound(f"{user} does not hold the role {role!r}", place="role")
        uow.session.delete(grant)
        uow.audit.append(actor.name, "role.revoke", f"user/{user}", {"role": role})
        uow.commit()
        return {"user": user, "role": role, "revoked": True}


def list_roles(catalogue: Catalogue) -> dict[str, list[str]]:
    with UnitOfWork(catalogue, write=False) as uow:
        users: dict[str, list[str]] = {}
        for grant in uow.session.execute(
                select(t.RoleGrant).order_by(t.RoleGrant.user, t.RoleGrant.role)).scalars():
            users.setdefault(grant.user, []).append(grant.role)
        return users


def _roles(uow: UnitOfWork, name: str) -> set[str]:
    return set(uow.session.execute(
        select(t.RoleGrant.role).where(t.RoleGrant.user == name)).scalars())
