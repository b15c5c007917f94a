"""Who is acting, with the catalogue roles they hold: one record for the use cases and the gates."""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Actor:
    """`name` is a login name, `roles` the catalogue roles held (`publisher`, `approver`,
    `admin`)."""

    name: str
    roles: frozenset[str] = frozenset()

    def has_role(self, role: str) -> bool:
        # Roles do not imply each other: an admin manages the catalogue but does not approve, so
        # that four eyes always means two approvers. Everyone may read.
        return role == "reader" or role in self.roles
