"""The in-memory unit of work offers each repository it fakes with the methods and parameters of
the real one, so a rule tested on the fake calls what the database version has."""

from __future__ import annotations

import inspect

import pytest

from registry.store.role_repository import RoleRepository
from tests.fakes import FakeRoleRepository, FakeUnitOfWork

# The attribute on the unit of work, the real repository and its fake.
FAKED = [("roles", RoleRepository, FakeRoleRepository)]


def public_methods(cls: type) -> dict[str, inspect.Signature]:
    return {name: inspect.signature(member) for name, member in vars(cls).items()
            if callable(member) and not name.startswith("_")}


@pytest.mark.parametrize(("attribute", "real", "fake"), FAKED)
def test_each_fake_repository_has_the_real_ones_methods(attribute, real, fake):
    assert isinstance(getattr(FakeUnitOfWork(), attribute), fake)
    expected, found = public_methods(real), public_methods(fake)
    assert sorted(found) == sorted(expected)
    for name, signature in expected.items():
        assert list(found[name].parameters) == list(signature.parameters), name
