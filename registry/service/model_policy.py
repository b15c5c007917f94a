"""Which promotion policy a model line follows: a pure reading of its row, for every use case."""

from __future__ import annotations

from registry import gates
from registry.store import tables as t


def policy_of(model: t.Model) -> gates.Policy:
    """The model's own policy laid over the catalogue-wide default, or the default alone."""
    if model.policy_toml:
        return gates.load_policy(model.policy_toml, source=f"policy of {model.name}",
                                 base=gates.default_policy())
    return gates.default_policy()
