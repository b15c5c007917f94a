"""The one authorisation rule, on an in-memory unit of work: every action against every role."""

from __future__ import annotations

import pytest

from registry.errors import Forbidden
from registry.service.actors import ROLES, Actor
from registry.service.authorisation import (ACTIONS, authorise, may, require_first_admin,
                                            roles_in_force)

from tests.fakes import FakeUnitOfWork

PEOPLE = {"mara.kowalczyk": {"admin"}, "ines.okafor": {"publisher"},
          "tomas.lindqvist": {"approver"}, "priya.raman": {"approver", "publisher"}}
AUTHOR = "ines.okafor"


def actor(name: str, roles=None) -> Actor:
    return Actor(name, frozenset(PEOPLE.get(name, set()) if roles is None else roles))


@pytest.mark.parametrize("action", sorted(ACTIONS))
@pytest.mark.parametrize("role", ["none", *ROLES])
def test_each_action_is_allowed_exactly_to_the_roles_of_its_row(action, role):
    held = set() if role == "none" else {role}
    uow = FakeUnitOfWork({**PEOPLE, "someone": held})
    allowed = may(uow, actor("someone", held), action, authors=(AUTHOR,))
    assert allowed == (role in ACTIONS[action].roles)


def test_roles_do_not_imply_each_other():
    uow = FakeUnitOfWork(PEOPLE)
    admin = actor("mara.kowalczyk")
    for action in ("version.approve", "gate.waive", "version.register", "stage.promote"):
        assert not may(uow, admin, action)


def test_an_author_may_neither_approve_nor_waive_their_own_version():
    uow = FakeUnitOfWork({**PEOPLE, AUTHOR: {"approver", "publisher"}})
    for action in ("version.approve", "gate.waive"):
        with pytest.raises(Forbidden, match="four eyes"):
            authorise(uow, actor(AUTHOR), action, authors=(AUTHOR, "ci-pipeline"))
    authorise(uow, actor("tomas.lindqvist"), "version.approve", authors=(AUTHOR,))


def test_a_role_counts_only_while_the_catalogue_still_grants_it():
    # A token made for an approver whose role was revoked since: the role is no longer in force.
    uow = FakeUnitOfWork({**PEOPLE, "tomas.lindqvist": set()})
    token_actor = Actor("tomas.lindqvist", frozenset({"approver"}))
    assert roles_in_force(uow, token_actor) == frozenset()
    with pytest.raises(Forbidden):
        authorise(uow, token_actor, "version.approve")


def test_a_token_acts_with_its_own_role_only():
    uow = FakeUnitOfWork(PEOPLE)
    publisher_token_of_priya = Actor("priya.raman", frozenset({"publisher"}))
    assert not may(uow, publisher_token_of_priya, "version.approve")
    assert may(uow, publisher_token_of_priya, "version.register")


def test_before_the_first_admin_anyone_may_act_except_where_approvers_are_needed():
    uow = FakeUnitOfWork({})
    nobody = actor("someone", set())
    for action, rule in ACTIONS.items():
        assert may(uow, nobody, action) == rule.open_before_first_admin, action
    assert not ACTIONS["version.approve"].open_before_first_admin
    assert not ACTIONS["gate.waive"].open_before_first_admin
    assert not ACTIONS["stage.guarded-move"].open_before_first_admin


def test_the_first_grant_must_make_an_admin():
    with pytest.raises(Forbidden, match="no admin yet"):
        require_first_admin(FakeUnitOfWork({}), "publisher")
    require_first_admin(FakeUnitOfWork({}), "admin")
    require_first_admin(FakeUnitOfWork(PEOPLE), "publisher")


def test_a_refusal_names_the_roles_needed_and_held():
    uow = FakeUnitOfWork(PEOPLE)
    with pytest.raises(Forbidden) as caught:
        authorise(uow, actor("ines.okafor"), "version.approve")
    assert "approver" in caught.value.message and "publisher" in caught.value.message
    assert caught.value.exit_code == 2 and caught.value.http_status == 403


def test_an_undeclared_action_is_a_programming_error():
    with pytest.raises(LookupError):
        authorise(FakeUnitOfWork(PEOPLE), actor("mara.kowalczyk"), "model.paint")
