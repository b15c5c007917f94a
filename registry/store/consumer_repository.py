"""Consumers: declared readers of a model's output, with their numbered reader schemas."""

from __future__ import annotations

from sqlalchemy import func, select
from sqlalchemy.orm import Session

from registry.store import tables as t


class ConsumerRepository:
    """Consumer rows, read and written inside the unit of work's transaction."""

    def __init__(self, session: Session) -> None:
        self._session = session

    def named(self, name: str) -> t.Consumer | None:
        return self._session.execute(
            select(t.Consumer).where(t.Consumer.name == name)).scalar_one_or_none()

    def add(self, consumer: t.Consumer) -> t.Consumer:
        self._session.add(consumer)
        self._session.flush()
        return consumer

    def remove(self, consumer: t.Consumer) -> None:
        """The consumer and its reader schemas; the audit log keeps what it was. Row by row, so
        the event closing the transaction records each deleted row (docs/row-coverage.md)."""
        for schema in self.schemas(consumer):
            self._session.delete(schema)
        self._session.flush()
        self._session.delete(consumer)
        self._session.flush()

    def model_name(self, consumer: t.Consumer) -> str:
        """The name of the model whose output the consumer reads."""
        return self._session.get_one(t.Model, consumer.model_id).name

    def schemas(self, consumer: t.Consumer) -> list[t.ConsumerSchema]:
        return list(self._session.execute(
            select(t.ConsumerSchema).where(t.ConsumerSchema.consumer_id == consumer.id)
            .order_by(t.ConsumerSchema.number)).scalars())

    def current_schema(self, consumer: t.Consumer) -> t.ConsumerSchema:
        return self._session.execute(
            select(t.ConsumerSchema).where(t.ConsumerSchema.consumer_id == consumer.id)
            .order_by(t.ConsumerSchema.number.desc()).limit(1)).scalar_one()

    def next_schema_number(self, consumer: t.Consumer) -> int:
        last = self._session.execute(
            select(func.max(t.ConsumerSchema.number))
            .where(t.ConsumerSchema.consumer_id == consumer.id)).scalar_one()
        return (last or 0) + 1

    def add_schema(self, schema: t.ConsumerSchema) -> t.ConsumerSchema:
        self._session.add(schema)
        self._session.flush()
        return schema

    def of_model(self, model_id: int) -> list[t.Consumer]:
        return list(self._session.execute(
            select(t.Consumer).where(t.Consumer.model_id == model_id)
            .order_by(t.Consumer.name)).scalars())

    def every(self) -> list[tuple[t.Consumer, str]]:
        """Every consumer with the name of the model it reads."""
        return list(self._session.execute(
            select(t.Consumer, t.Model.name).join(t.Model, t.Model.id == t.Consumer.model_id)
            .order_by(t.Consumer.name)).all())

    def holdings(self, model_id: int) -> list[tuple[t.Version, str, bool]]:
        """(version, stage, exclusive) for every stage a version of the model holds now,
        exclusive stages first; retired left out."""
        return list(self._session.execute(
            select(t.Version, t.StageHolding.stage, t.StageHolding.is_exclusive)
            .join(t.Version, t.Version.id == t.StageHolding.version_id)
            .where(t.StageHolding.model_id == model_id, t.StageHolding.stage != "retired")
            .order_by(t.StageHolding.is_exclusive.desc(), t.StageHolding.stage,
                      t.Version.number)).all())
