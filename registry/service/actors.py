"""Who is acting, and with which roles kept in the catalogue."""

from __future__ import annotations

from dataclasses import dataclass

ROLES = ("reader", "publisher", "approver", "admin")


@dataclass(frozen=True)
class Actor:
    name: str
    roles: frozenset[str] = frozenset()

    def has_role(self, role: str) -> bool:
        # Roles do not imply each other: an admin manages the catalogue but does not approve, so
        # that four eyes always means two approvers. Everyone may read.
        return role == "reader" or role in self.roles
