"""The one authorisation rule: which roles allow which write, asked by every use case that writes.

The command line, the remote command line and the API all reach the catalogue through the
use cases, and every use case that changes something calls `authorise` first, inside its own
transaction. No shell checks roles on its own, so the three doors cannot disagree.

The rule, in full:

- Each action names the roles any one of which allows it (ACTIONS below). Roles do not imply
  each other: an admin manages the catalogue but does not approve, so four eyes always means two
  approvers. Everyone may read.
- The roles that count are those the actor acts with (a token's role, or every role of a local
  user) and still holds in the catalogue now, read in the same transaction as the write.
- A catalogue with no admin yet has no roles at all, so anyone may act until the first admin is
  granted (how a new catalogue is set up); the first grant, or the first token, must be an
  admin's. Approvals, waivers and moves into or out of guarded stages are never open that way:
  the gates count only approvers, and a catalogue without an admin has none.
- Four eyes: the author of a version (or whoever registered it) may neither approve it nor waive
  its gates.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass

from registry.errors import Forbidden
from registry.service.actors import Actor
from registry.store.unit_of_work import UnitOfWork

PUBLISHER, APPROVER, ADMIN = "publisher", "approver", "admin"


@dataclass(frozen=True)
class Permission:
    """Who may take one action: any one of `roles`; `what` names it in a refusal."""

    roles: tuple[str, ...]
    what: str
    # Open to anyone while the catalogue has no admin (see the module docstring).
    open_before_first_admin: bool = True
    # Never the version's own author (four eyes).
    excludes_author: bool = False


MOVERS = (PUBLISHER, APPROVER)

ACTIONS: dict[str, Permission] = {
    "model.create": Permission((ADMIN,), "creating a model"),
    "model.set-policy": Permission((ADMIN,), "setting a model's policy"),
    "version.register": Permission((PUBLISHER,), "registering a version"),
    "evaluation.add": Permission((PUBLISHER,), "recording an evaluation"),
    "dataset.add": Permission((PUBLISHER,), "registering a dataset"),
    "dataset.recall": Permission(MOVERS, "recalling a dataset"),
    "stage.promote": Permission(MOVERS, "promoting a version"),
    "stage.rollback": Permission(MOVERS, "rolling back a stage"),
    "version.retire": Permission(MOVERS, "retiring a version"),
    # Entering, leaving or restoring a guarded stage (one whose gates include an approval).
    "stage.guarded-move": Permission((APPROVER,), "moving a version into or out of a guarded "
                                     "stage", open_before_first_admin=False),
    "version.approve": Permission((APPROVER,), "approving a version",
                                  open_before_first_admin=False, excludes_author=True),
    "gate.waive": Permission((APPROVER,), "waiving a gate", open_before_first_admin=False,
                             excludes_author=True),
    "role.grant": Permission((ADMIN,), "granting roles"),
    "role.revoke": Permission((ADMIN,), "revoking roles"),
    "token.create": Permission((ADMIN,), "managing tokens"),
    # Tokens exist only once an admin does, so these two are never open.
    "token.revoke": Permission((ADMIN,), "managing tokens", open_before_first_admin=False),
    "token.list": Permission((ADMIN,), "listing tokens", open_before_first_admin=False),
}


def permission(action: str) -> Permission:
    try:
        return ACTIONS[action]
    except KeyError:  # a programming error: every write names an action of the table
        raise LookupError(f"no permission is declared for the action {action!r}") from None


def authorise(uow: UnitOfWork, actor: Actor, action: str, *,
              authors: Iterable[str] = (), place: str = "role") -> None:
    """Refuse (Forbidden) an action the actor may not take; return quietly otherwise.

    `authors` are the people behind the version acted on (its author and who registered it),
    for the four-eyes actions.
    """
    rule = permission(action)
    if rule.excludes_author and actor.name in set(authors):
        raise Forbidden(f"{actor.name} wrote this version; four eyes: {rule.what} needs "
                        "another approver", place=place)
    if rule.open_before_first_admin and not uow.roles.has_any_admin():
        return
    effective = roles_in_force(uow, actor)
    if effective & set(rule.roles):
        return
    held = ", ".join(sorted(effective)) or "no role"
    raise Forbidden(f"{rule.what} needs the {' or '.join(rule.roles)} role; {actor.name} acts "
                    f"with {held}", place=place)


def roles_in_force(uow: UnitOfWork, actor: Actor) -> frozenset[str]:
    """The roles the actor acts with that the catalogue still grants them now."""
    return frozenset(actor.roles) & uow.roles.held_by(actor.name)


def may(uow: UnitOfWork, actor: Actor, action: str, *, authors: Iterable[str] = ()) -> bool:
    """Whether `authorise` would allow the action (for reads that show what one may do)."""
    try:
        authorise(uow, actor, action, authors=authors)
    except Forbidden:
        return False
    return True


def is_bootstrap(uow: UnitOfWork) -> bool:
    """A catalogue with no admin yet: its first grant or token must make one."""
    return not uow.roles.has_any_admin()


def require_first_admin(uow: UnitOfWork, role: str, *, place: str = "role") -> None:
    """Before the first admin exists, only an admin may be made (by grant or by token)."""
    if is_bootstrap(uow) and role != ADMIN:
        raise Forbidden("this catalogue has no admin yet: make the first admin first "
                        "(`lockkeeper user grant NAME admin` or an admin token)", place=place)
