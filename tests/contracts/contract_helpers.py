"""A catalogue with a model `m`, the Brackwater people, and small schemas for feeds and
consumers: what the contract tests build on."""

from __future__ import annotations

import json
from pathlib import Path

from tests.catalogue.helpers import INPUT_SCHEMA, OUTPUT_SCHEMA
from tests.catalogue.stage_helpers import set_up_model

CONTRACT_GATES = ["reads-live-feed", "rollback-safe", "output-readable"]
APPROVER = "tomas.lindqvist"


def with_field(schema: dict, field: dict) -> dict:
    grown = json.loads(json.dumps(schema))
    grown["fields"].append(field)
    return grown


def without_field(schema: dict, name: str) -> dict:
    shrunk = json.loads(json.dumps(schema))
    shrunk["fields"] = [f for f in shrunk["fields"] if f["name"] != name]
    return shrunk


def write_schema(folder: Path, name: str, schema: dict) -> str:
    folder.mkdir(parents=True, exist_ok=True)
    path = folder / f"{name}.avsc"
    path.write_text(json.dumps(schema))
    return str(path)


def set_up_contracts(cli, tmp_path: Path, *, feed: str | None = "segment-features") -> None:
    """Model `m` whose shadow and live keep only the contract gates; a feed `feed` with the
    tests' input schema as v1, declared on the model."""
    set_up_model(cli, tmp_path, {"shadow": CONTRACT_GATES, "canary": [], "live": CONTRACT_GATES},
                 skippable=("shadow", "canary"))
    if feed is None:
        return
    cli.json("feed", "create", feed, "--retain-days", "14")
    cli.json("feed", "publish", feed, write_schema(tmp_path / "feeds", "v1", INPUT_SCHEMA))
    cli.json("model", "set-feed", "m", feed)


def audit_count(cli) -> int:
    return cli.json("audit", "verify")["events"]


def last_audit_action(catalogue_url: str) -> str:
    from registry.store.catalogue import open_catalogue
    from registry.store.unit_of_work import UnitOfWork
    from sqlalchemy import select

    from registry.store import tables as t

    catalogue = open_catalogue(catalogue_url)
    try:
        with UnitOfWork(catalogue, write=False) as uow:
            return uow.session.execute(select(t.AuditEvent.action)
                                       .order_by(t.AuditEvent.sequence.desc())).scalars().first()
    finally:
        catalogue.close()


__all__ = ["INPUT_SCHEMA", "OUTPUT_SCHEMA"]
