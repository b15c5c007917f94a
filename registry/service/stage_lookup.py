"""The question a scoring service polls: which version holds this stage of this model now?

The reads are registry/store/stage_holder_reads.py, on a plain connection without the unit of
work: they only read, and this is the hot path.
"""

from __future__ import annotations

import hashlib
import json
from dataclasses import dataclass
from datetime import UTC, datetime
from functools import lru_cache

from sqlalchemy import Connection

from registry.errors import NotFound, StageNotHeld
from registry.names import check_name
from registry.store.catalogue import Catalogue
from registry.store.stage_holder_reads import holder_rows, model_exists


@dataclass(frozen=True)
class StageHolder:
    model: str
    stage: str
    version: int
    document_digest: str
    input_schema_fingerprint: str  # SHA-256 of the Parsing Canonical Form (Avro specification)
    since: str
    holders: tuple[int, ...]  # every holder, newest first; one for an exclusive stage
    tag: str                  # changes whenever the holders change: the ETag

    def to_dict(self) -> dict:
        return {"model": self.model, "stage": self.stage, "version": self.version,
                "document_digest": self.document_digest,
                "input_schema_fingerprint": self.input_schema_fingerprint,
                "since": self.since, "holders": list(self.holders)}


@lru_cache(maxsize=1024)
def input_schema_fingerprint(schema_json: str) -> str:
    from registry import schema as avro

    return avro.fingerprint(avro.parse(json.loads(schema_json))).sha256


def _utc(moment: datetime) -> datetime:
    return moment if moment.tzinfo is not None else moment.replace(tzinfo=UTC)  # SQLite: naive


def stage_holder(catalogue: Catalogue, model: str, stage: str) -> StageHolder:
    with catalogue.engine.connect() as connection:
        return read_stage_holder(connection, model, stage)


def read_stage_holder(connection: Connection, model: str, stage: str) -> StageHolder:
    check_name(model, what="model")
    check_name(stage, what="stage")
    rows = holder_rows(connection, model, stage)
    if not rows:
        # Only now, off the hot path, tell an unknown model from a stage nobody holds.
        if not model_exists(connection, model):
            raise NotFound(f"unknown model {model!r}", place="model")
        raise StageNotHeld(f"no version of {model!r} holds {stage!r}", place="stage")
    newest = rows[0]
    tag = hashlib.sha256("|".join(f"{row.id}@{row.since.isoformat()}" for row in rows)
                         .encode("utf-8")).hexdigest()[:32]
    return StageHolder(model=model, stage=stage, version=newest.number,
                       document_digest=newest.document_digest,
                       input_schema_fingerprint=input_schema_fingerprint(newest.input_schema_json),
                       since=_utc(newest.since).isoformat(),
                       holders=tuple(row.number for row in rows), tag=tag)
