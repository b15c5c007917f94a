"""The catalogue client's two doors offer the same operations with the same signatures, and
the remote one imports nothing of the server."""

from __future__ import annotations

import inspect
import subprocess
import sys

from registry.cli.client import CatalogueClient
from registry.cli.local import LocalCatalogue
from registry.cli.remote import ApiClient
from registry.cli.remote_catalogue import RemoteCatalogue


def _operations(cls: type) -> dict[str, inspect.Signature]:
    return {name: inspect.signature(member) for name, member in vars(cls).items()
            if callable(member) and not name.startswith("_")}


def test_both_doors_offer_exactly_the_operations_of_the_protocol():
    wanted = _operations(CatalogueClient)
    assert len(wanted) > 40
    for door in (LocalCatalogue, RemoteCatalogue):
        offered = {name for name in _operations(door) if name != "actor"}
        assert offered == set(wanted), door.__name__


def test_both_doors_take_the_parameters_of_the_protocol():
    for name, signature in _operations(CatalogueClient).items():
        for door in (LocalCatalogue, RemoteCatalogue):
            found = inspect.signature(getattr(door, name))
            assert list(found.parameters) == list(signature.parameters), (door.__name__, name)
            assert [p.kind for p in found.parameters.values()] == [
                p.kind for p in signature.parameters.values()], (door.__name__, name)


def test_each_door_is_a_catalogue_client():
    # What mypy checks statically (registry.cli.context assigns both to a CatalogueClient).
    local: CatalogueClient = LocalCatalogue(lambda: None, "someone")
    remote: CatalogueClient = RemoteCatalogue(ApiClient("http://127.0.0.1:9"))
    assert local.user == "someone" and remote.api.base.endswith("/api/v1")


def test_the_remote_door_loads_nothing_of_the_server():
    code = ("import sys, registry.cli.remote_catalogue; "
            "print(sorted(m for m in sys.modules if m.startswith(('registry.api', 'registry.app',"
            " 'registry.service', 'registry.store', 'web', 'flask', 'sqlalchemy'))))")
    loaded = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                            check=True).stdout.strip()
    assert loaded == "[]"
