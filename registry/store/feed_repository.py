"""Feeds as contracts: their numbered writer schemas, the datasets they are built from, which
models and versions read them, and the stage holders among those readers."""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass

from sqlalchemy import func, select
from sqlalchemy.orm import Session

from registry.store import tables as t


@dataclass(frozen=True)
class ReadingHolder:
    """A version that reads a feed and holds a stage now: only what the feed check needs."""

    model: str
    model_id: int
    version: int
    input_schema_json: str
    stage: str
    is_exclusive: bool


class FeedRepository:
    """Feed rows, read and written inside the unit of work's transaction."""

    def __init__(self, session: Session) -> None:
        self._session = session

    def named(self, name: str) -> t.Feed | None:
        return self._session.execute(select(t.Feed).where(t.Feed.name == name)).scalar_one_or_none()

    def every(self) -> list[t.Feed]:
        return list(self._session.execute(select(t.Feed).order_by(t.Feed.name)).scalars())

    def add(self, feed: t.Feed) -> t.Feed:
        self._session.add(feed)
        self._session.flush()
        return feed

    def schemas(self, feed: t.Feed) -> list[t.FeedSchema]:
        """Every published writer schema, oldest first."""
        return list(self._session.execute(
            select(t.FeedSchema).where(t.FeedSchema.feed_id == feed.id)
            .order_by(t.FeedSchema.number)).scalars())

    def schema_with_fingerprint(self, feed: t.Feed, fingerprint: str) -> t.FeedSchema | None:
        return self._session.execute(
            select(t.FeedSchema).where(t.FeedSchema.feed_id == feed.id,
                                       t.FeedSchema.fingerprint == fingerprint)
            .order_by(t.FeedSchema.number)).scalars().first()

    def next_schema_number(self, feed: t.Feed) -> int:
        last = self._session.execute(
            select(func.max(t.FeedSchema.number)).where(t.FeedSchema.feed_id == feed.id)
        ).scalar_one()
        return (last or 0) + 1

    def add_schema(self, schema: t.FeedSchema) -> t.FeedSchema:
        self._session.add(schema)
        self._session.flush()
        return schema

    def add_sources(self, feed: t.Feed, datasets: Iterable[t.Dataset]) -> None:
        for dataset in datasets:
            self._session.add(t.FeedSource(feed_id=feed.id, dataset_id=dataset.id))
        self._session.flush()

    def source_names(self, feed: t.Feed) -> list[str]:
        return list(self._session.execute(
            select(t.Dataset.name).join(t.FeedSource, t.FeedSource.dataset_id == t.Dataset.id)
            .where(t.FeedSource.feed_id == feed.id).order_by(t.Dataset.name)).scalars())

    def dataset_named(self, name: str) -> t.Dataset | None:
        return self._session.execute(
            select(t.Dataset).where(t.Dataset.name == name)).scalar_one_or_none()

    # -- who reads a feed ------------------------------------------------------------------

    def of_model(self, model: t.Model) -> t.Feed | None:
        row = self._session.get(t.ModelFeed, model.id)
        return self._session.get(t.Feed, row.feed_id) if row else None

    def set_for_model(self, model: t.Model, feed: t.Feed) -> None:
        row = self._session.get(t.ModelFeed, model.id)
        if row is None:
            self._session.add(t.ModelFeed(model_id=model.id, feed_id=feed.id))
        else:
            row.feed_id = feed.id
        self._session.flush()

    def of_version(self, version: t.Version) -> t.Feed | None:
        """The feed a version reads: its manifest's, or else its model's."""
        row = self._session.get(t.VersionFeed, version.id)
        if row is not None:
            return self._session.get(t.Feed, row.feed_id)
        model_row = self._session.get(t.ModelFeed, version.model_id)
        return self._session.get(t.Feed, model_row.feed_id) if model_row else None

    def declared_by_version(self, version: t.Version) -> t.Feed | None:
        row = self._session.get(t.VersionFeed, version.id)
        return self._session.get(t.Feed, row.feed_id) if row else None

    def set_for_version(self, version: t.Version, feed: t.Feed) -> None:
        self._session.add(t.VersionFeed(version_id=version.id, feed_id=feed.id))
        self._session.flush()

    def reading_holders(self, feed: t.Feed) -> list[ReadingHolder]:
        """Every version reading the feed that holds a stage other than retired, in one query
        over the stage holdings (the check a feed's producer runs before publishing)."""
        declared = t.VersionFeed.__table__.alias("declared")
        on_model = t.ModelFeed.__table__.alias("on_model")
        rows = self._session.execute(
            select(t.Model.name, t.Model.id, t.Version.number, t.Version.input_schema_json,
                   t.StageHolding.stage, t.StageHolding.is_exclusive)
            .select_from(t.StageHolding)
            .join(t.Version, t.Version.id == t.StageHolding.version_id)
            .join(t.Model, t.Model.id == t.StageHolding.model_id)
            .outerjoin(declared, declared.c.version_id == t.Version.id)
            .outerjoin(on_model, on_model.c.model_id == t.Version.model_id)
            .where(func.coalesce(declared.c.feed_id, on_model.c.feed_id) == feed.id,
                   t.StageHolding.stage != "retired")
            .order_by(t.StageHolding.is_exclusive.desc(), t.Model.name, t.StageHolding.stage,
                      t.Version.number)).all()
        return [ReadingHolder(model=name, model_id=model_id, version=number,
                              input_schema_json=schema, stage=stage, is_exclusive=bool(exclusive))
                for name, model_id, number, schema, stage, exclusive in rows]

    def live_samples(self, model_ids: Iterable[int]) -> dict[int, t.Dataset]:
        """model id -> its newest live sample, for many models in one query."""
        ids = sorted(set(model_ids))
        if not ids:
            return {}
        newest: dict[int, t.Dataset] = {}
        for dataset in self._session.execute(
                select(t.Dataset).where(t.Dataset.feed_model_id.in_(ids),
                                        t.Dataset.role == "live-sample")
                .order_by(t.Dataset.created_at, t.Dataset.id)).scalars():
            if dataset.feed_model_id is not None:  # always: the query asks for it
                newest[dataset.feed_model_id] = dataset
        return newest


    def stages_held(self, version_ids: Iterable[int]) -> dict[int, list[str]]:
        """version id -> the stages it holds now, by name."""
        held: dict[int, list[str]] = {}
        ids = sorted(set(version_ids))
        for start in range(0, len(ids), 500):
            for version, stage in self._session.execute(
                    select(t.StageHolding.version_id, t.StageHolding.stage)
                    .where(t.StageHolding.version_id.in_(ids[start:start + 500]))
                    .order_by(t.StageHolding.stage)):
                held.setdefault(version, []).append(stage)
        return held
