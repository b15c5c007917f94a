"""`audit verify` for the contracts: every feed writer schema and consumer reader schema is
what its audit event recorded (the SHA-256 of its Parsing Canonical Form), so a schema changed
behind the catalogue's back, which would change what the gates decide, is found."""

from __future__ import annotations

import json

from registry import schema as avro
from registry.node_ids import contract_version_id
from registry.schema.errors import SchemaError
from registry.store.unit_of_work import UnitOfWork

CONTRACT_ACTIONS = {"feed.publish": "feed_version", "consumer.add": "schema_version",
                    "consumer.update": "schema_version"}


def contract_record_key(subject: str, action: str, details: dict) -> str | None:
    """Where an audit event of a contract schema is filed: `feed/NAME/version/N`."""
    field = CONTRACT_ACTIONS.get(action)
    if field is None or not isinstance(details, dict) or details.get(field) is None:
        return None
    return f"{subject}/version/{details[field]}"


def _recomputed(schema_json: str) -> str | None:
    try:
        return avro.fingerprint(avro.parse(json.loads(schema_json))).sha256
    except (json.JSONDecodeError, SchemaError, TypeError, ValueError):
        return None


def contract_findings(uow: UnitOfWork, recorded: dict[str, dict]) -> list[tuple[str, str]]:
    """(place, problem) for each contract schema that is not what was recorded."""
    rows = [(contract_version_id("feed", feed.name, s.number), s.schema_json, s.fingerprint)
            for feed in uow.feeds.every() for s in uow.feeds.schemas(feed)]
    rows += [(contract_version_id("consumer", consumer.name, s.number), s.schema_json,
              s.fingerprint)
             for consumer, _ in uow.consumers.every() for s in uow.consumers.schemas(consumer)]
    findings = []
    for place, schema_json, stored in rows:
        event = recorded.get(place)
        if event is None:
            findings.append((place, "no audit event records this schema"))
            continue
        actual = _recomputed(schema_json)
        if actual is None:
            findings.append((place, "its stored schema is no longer a readable Avro schema"))
        elif actual != stored or stored != event.get("fingerprint"):
            findings.append((place, "its schema is not the one the audit log recorded"))
    return findings
