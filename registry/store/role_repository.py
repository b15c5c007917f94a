"""The roles people hold in the catalogue: the rows the one authorisation rule reads."""

from __future__ import annotations

from datetime import datetime

from sqlalchemy import select
from sqlalchemy.orm import Session

from registry.store import tables as t


class RoleRepository:
    """Role grants, read and written inside the unit of work's transaction."""

    def __init__(self, session: Session) -> None:
        self._session = session

    def held_by(self, user: str) -> frozenset[str]:
        return frozenset(self._session.execute(
            select(t.RoleGrant.role).where(t.RoleGrant.user == user)).scalars())

    def has_any_admin(self) -> bool:
        return self._session.execute(
            select(t.RoleGrant).where(t.RoleGrant.role == "admin")).first() is not None

    def is_granted(self, user: str, role: str) -> bool:
        return self._session.get(t.RoleGrant, (user, role)) is not None

    def grant(self, user: str, role: str, *, at: datetime, by: str) -> None:
        self._session.add(t.RoleGrant(user=user, role=role, granted_at=at, granted_by=by))
        self._session.flush()

    def revoke(self, user: str, role: str) -> bool:
        grant = self._session.get(t.RoleGrant, (user, role))
        if grant is None:
            return False
        self._session.delete(grant)
        self._session.flush()
        return True

    def by_user(self) -> dict[str, list[str]]:
        users: dict[str, list[str]] = {}
        for grant in self._session.execute(
                select(t.RoleGrant).order_by(t.RoleGrant.user, t.RoleGrant.role)).scalars():
            users.setdefault(grant.user, []).append(grant.role)
        return users
