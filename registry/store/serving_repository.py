"""The queries of evidence after release: served batches, window summaries and served rows."""

from __future__ import annotations

from collections.abc import Generator, Sequence
from datetime import datetime

from sqlalchemy import select
from sqlalchemy.orm import Session, load_only

from registry.store import tables as t


class ServingRepository:
    """`uow.serving`: what serving systems sent back, by model, version and window."""

    def __init__(self, session: Session) -> None:
        self._session = session

    # --- batches ---------------------------------------------------------------------------

    def batch(self, model_id: int, kind: str, digest: str) -> t.ServedBatch | None:
        return self._session.execute(select(t.ServedBatch).where(
            t.ServedBatch.model_id == model_id, t.ServedBatch.kind == kind,
            t.ServedBatch.digest == digest)).scalar_one_or_none()

    def add_batch(self, batch: t.ServedBatch) -> t.ServedBatch:
        self._session.add(batch)
        self._session.flush()
        return batch

    # --- stage timeline and references -----------------------------------------------------

    def stage_events(self, model_id: int) -> list[tuple[int, str, str, datetime]]:
        """(version number, stage, event, when) of every stage event of a model, oldest first."""
        rows = self._session.execute(
            select(t.Version.number, t.StageEvent.stage, t.StageEvent.event,
                   t.StageEvent.created_at)
            .join(t.Version, t.Version.id == t.StageEvent.version_id)
            .where(t.StageEvent.model_id == model_id).order_by(t.StageEvent.id))
        return [(number, stage, event, when) for number, stage, event, when in rows]

    def versions(self, model_id: int) -> list[t.Version]:
        return list(self._session.execute(
            select(t.Version).where(t.Version.model_id == model_id)
            .order_by(t.Version.number)).scalars())

    def training_datasets(self, version_id: int) -> list[t.Dataset]:
        return list(self._session.execute(
            select(t.Dataset).join(t.VersionDataset, t.VersionDataset.dataset_id == t.Dataset.id)
            .where(t.VersionDataset.version_id == version_id,
                   t.VersionDataset.relation == "trained-on")
            .order_by(t.Dataset.name)).scalars())

    # --- window summaries ------------------------------------------------------------------

    def window(self, model_id: int, version_id: int, window_start: int,
               window_seconds: int) -> t.ServedWindow | None:
        return self._session.execute(select(t.ServedWindow).where(
            t.ServedWindow.model_id == model_id, t.ServedWindow.version_id == version_id,
            t.ServedWindow.window_start == window_start,
            t.ServedWindow.window_seconds == window_seconds)).scalar_one_or_none()

    def add_window(self, window: t.ServedWindow) -> None:
        self._session.add(window)
        self._session.flush()

    def windows(self, model_id: int, window_seconds: int, *, since: int | None = None,
                version_ids: Sequence[int] | None = None) -> list[tuple[t.ServedWindow, int]]:
        """(window, version number) of a model, oldest window first."""
        query = self._windows_query((t.ServedWindow, t.Version.number), model_id,
                                    window_seconds, since, version_ids)
        return [(window, number) for window, number in self._session.execute(query)]

    def window_figures(self, model_id: int, window_seconds: int, *, since: int | None = None,
                       version_ids: Sequence[int] | None = None
                       ) -> list[tuple[int, int, int, str | None]]:
        """(window start, version number, rows, figures JSON) without the summaries: what a
        report at the stored window reads."""
        query = self._windows_query(
            (t.ServedWindow.window_start, t.Version.number, t.ServedWindow.rows,
             t.ServedWindow.figures_json), model_id, window_seconds, since, version_ids)
        return [tuple(row) for row in self._session.execute(query)]

    @staticmethod
    def _windows_query(columns, model_id: int, window_seconds: int, since: int | None,
                       version_ids: Sequence[int] | None):
        query = (select(*columns).join(t.Version, t.Version.id == t.ServedWindow.version_id)
                 .where(t.ServedWindow.model_id == model_id,
                        t.ServedWindow.window_seconds == window_seconds))
        if since is not None:
            query = query.where(t.ServedWindow.window_start >= since)
        if version_ids is not None:
            query = query.where(t.ServedWindow.version_id.in_(list(version_ids)))
        return query.order_by(t.ServedWindow.window_start, t.Version.number)

    def windows_at(self, model_id: int, window_seconds: int,
                   starts: Sequence[int]) -> list[tuple[t.ServedWindow, int]]:
        """(window, version number) of the given window starts."""
        return [(window, number) for window, number in self._session.execute(
            select(t.ServedWindow, t.Version.number)
            .join(t.Version, t.Version.id == t.ServedWindow.version_id)
            .where(t.ServedWindow.model_id == model_id,
                   t.ServedWindow.window_seconds == window_seconds,
                   t.ServedWindow.window_start.in_(list(starts))))]

    def has_windows(self, model_id: int) -> bool:
        return self._session.execute(select(t.ServedWindow.id).where(
            t.ServedWindow.model_id == model_id).limit(1)).first() is not None

    # --- served rows -----------------------------------------------------------------------

    def add_rows(self, rows: t.ServedRows) -> None:
        """Written at once: SQLite copies the content into its pages without the GIL, so a
        caller's threads go on meanwhile."""
        self._session.add(rows)
        self._session.flush()

    def rows(self, model_id: int, kind: str, *, since: int | None = None,
             until: int | None = None) -> list[tuple[t.ServedRows, int | None]]:
        """(served rows, version number or None for outcomes), oldest window first."""
        query = (select(t.ServedRows, t.Version.number)
                 .outerjoin(t.Version, t.Version.id == t.ServedRows.version_id)
                 .where(t.ServedRows.model_id == model_id, t.ServedRows.kind == kind))
        if since is not None:
            query = query.where(t.ServedRows.window_start >= since)
        if until is not None:
            query = query.where(t.ServedRows.window_start < until)
        query = query.order_by(t.ServedRows.window_start, t.ServedRows.id)
        return [(rows, number) for rows, number in self._session.execute(query)]

    def contents(self, model_id: int, kind: str) -> Generator[tuple[int, bytes], None, None]:
        """(window start, compact content) of every row set of a kind, oldest window first,
        read one at a time: the row sets of a whole retention need not be in memory at once."""
        query = (select(t.ServedRows.window_start, t.ServedRows.content)
                 .where(t.ServedRows.model_id == model_id, t.ServedRows.kind == kind)
                 .order_by(t.ServedRows.window_start, t.ServedRows.id))
        result = self._session.execute(query.execution_options(yield_per=1))
        try:
            yield from ((start, content) for start, content in result)
        finally:  # a caller that stops early leaves no cursor open
            result.close()

    def newest_window(self, model_id: int) -> int | None:
        return self._session.execute(
            select(t.ServedRows.window_start).where(t.ServedRows.model_id == model_id)
            .order_by(t.ServedRows.window_start.desc()).limit(1)).scalar_one_or_none()

    def drop_rows_before(self, model_id: int, window_start: int) -> int:
        """Drop the served rows of windows before `window_start` (the policy's retention). Row
        by row, so the event closing the transaction records each one it dropped
        (docs/row-coverage.md); only the key is loaded, never the content."""
        expired = list(self._session.execute(
            select(t.ServedRows).options(load_only(t.ServedRows.id)).where(
                t.ServedRows.model_id == model_id, t.ServedRows.window_start < window_start))
            .scalars())
        for row in expired:
            self._session.delete(row)
        self._session.flush()
        return len(expired)

    def batches(self, model_id: int, kind: str) -> list[t.ServedBatch]:
        return list(self._session.execute(select(t.ServedBatch).where(
            t.ServedBatch.model_id == model_id, t.ServedBatch.kind == kind)
            .order_by(t.ServedBatch.id)).scalars())
