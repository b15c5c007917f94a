"""An in-memory unit of work: the repositories as dictionaries, for the service's rule tests.

It runs the rules (who may act, four eyes, the first admin) in microseconds, with no database;
the transactional guarantees keep their database tests on SQLite and PostgreSQL.
"""

from __future__ import annotations

from datetime import datetime


class FakeRoleRepository:
    def __init__(self, grants: dict[str, set[str]] | None = None) -> None:
        self.grants = {user: set(roles) for user, roles in (grants or {}).items()}

    def held_by(self, user: str) -> frozenset[str]:
        return frozenset(self.grants.get(user, ()))

    def has_any_admin(self) -> bool:
        return any("admin" in roles for roles in self.grants.values())

    def is_granted(self, user: str, role: str) -> bool:
        return role in self.grants.get(user, ())

    def grant(self, user: str, role: str, *, at: datetime, by: str) -> None:
        self.grants.setdefault(user, set()).add(role)

    def revoke(self, user: str, role: str) -> bool:
        held = self.grants.get(user, set())
        if role not in held:
            return False
        held.discard(role)
        return True

    def by_user(self) -> dict[str, list[str]]:
        return {user: sorted(roles) for user, roles in sorted(self.grants.items()) if roles}


class FakeUnitOfWork:
    """Stands in for registry.store.unit_of_work.UnitOfWork where a rule needs only repositories."""

    def __init__(self, grants: dict[str, set[str]] | None = None) -> None:
        self.roles = FakeRoleRepository(grants)
        self.committed = False

    def __enter__(self) -> FakeUnitOfWork:
        return self

    def __exit__(self, *exc_info: object) -> bool:
        return False

    def commit(self) -> None:
        self.committed = True
