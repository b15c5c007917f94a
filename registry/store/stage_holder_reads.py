"""The hot-path reads behind "which version holds this stage now?", on a plain connection.

One indexed query (models.name is unique; stage_holdings is indexed on model, stage, version),
without the unit of work: it only reads, and a scoring service polls it.
"""

from __future__ import annotations

from collections.abc import Sequence
from datetime import datetime

from sqlalchemy import Connection, Row, select

from registry.store import tables as t


def holder_rows(connection: Connection, model: str,
                stage: str) -> Sequence[Row[int, datetime, int, str, str]]:
    """(id, since, number, document_digest, input_schema_json) of each holding, newest first."""
    query = (select(t.StageHolding.id, t.StageHolding.since, t.Version.number,
                    t.Version.document_digest, t.Version.input_schema_json)
             .join(t.Model, t.Model.id == t.StageHolding.model_id)
             .join(t.Version, t.Version.id == t.StageHolding.version_id)
             .where(t.Model.name == model, t.StageHolding.stage == stage)
             .order_by(t.StageHolding.since.desc(), t.StageHolding.id.desc()))
    return connection.execute(query).all()


def model_exists(connection: Connection, model: str) -> bool:
    return connection.execute(select(t.Model.id).where(t.Model.name == model)).first() is not None
