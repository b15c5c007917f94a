"""Roles kept in the catalogue for local users: publisher, approver, admin."""

from __future__ import annotations

from sqlalchemy import select

from registry.service.actors import Actor
from registry.store import tables as t
from registry.store.catalogue import Catalogue
from registry.store.unit_of_work import UnitOfWork


def load_actor(catalogue: Catalogue, name: str) -> Actor:
    with UnitOfWork(catalogue, write=False) as uow:
        roles = uow.session.execute(
            select(t.RoleGrant.role).where(t.RoleGrant.user == name)).scalars().all()
    return Actor(name=name, roles=frozenset(roles))
