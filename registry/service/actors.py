"""Who is acting, and with which roles kept in the catalogue."""

from __future__ import annotations

from dataclasses import dataclass

ROLES = ("reader", "publisher", "approver", "admin")


@dataclass(frozen=True)
class Actor:
    name: str
    roles: frozenset[str] = frozenset()

    def has_role(self, role: str) -> bool:
        # An admin may do everything, and everyone known to the catalogue may read.
        return role == "reader" or "admin" in self.roles or role in self.roles
