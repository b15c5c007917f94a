"""Who is acting, and with which roles kept in the catalogue."""

from __future__ import annotations

from registry.actors import Actor

ROLES = ("reader", "publisher", "approver", "admin")

__all__ = ["ROLES", "Actor"]
