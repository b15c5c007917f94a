"""A model's own promotion policy: shown and set through the audit log like every change."""

from __future__ import annotations

from registry import gates
from registry.node_ids import model_id
from registry.service.actors import Actor
from registry.service.authorisation import authorise
from registry.service.model_policy import policy_of
from registry.service.models import find_model
from registry.store.catalogue import Catalogue
from registry.store.unit_of_work import UnitOfWork


def show_policy(catalogue: Catalogue, model: str) -> dict:
    with UnitOfWork(catalogue, write=False) as uow:
        line = find_model(uow, model)
        policy = policy_of(line)
        own = line.policy_toml
    return {"model": model, "own_policy": own is not None, "policy": policy.to_dict(),
            "text": own if own is not None else gates.default_policy_text()}


def set_policy(catalogue: Catalogue, model: str, text: str, actor: Actor, *,
               source: str = "policy") -> dict:
    """Validate first (a bad policy changes nothing), then store it."""
    gates.load_policy(text, source=source, base=gates.default_policy())
    with UnitOfWork(catalogue) as uow:
        authorise(uow, actor, "model.set-policy", place="policy")
        line = find_model(uow, model)
        line.policy_toml = text
        uow.audit.append(actor.name, "model.policy", model_id(model), {"policy": text})
        uow.commit()
    return {"model": model, "set": True}
