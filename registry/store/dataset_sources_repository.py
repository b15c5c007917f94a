"""The files each dataset was made from (table dataset_sources), in the dataset's file order."""

from __future__ import annotations

from collections.abc import Sequence

from sqlalchemy import select
from sqlalchemy.orm import Session

from registry.store import tables as t


class DatasetSourceRepository:
    def __init__(self, session: Session) -> None:
        self._session = session

    def add(self, dataset_id: int, sources: Sequence[tuple[str, int, str]]) -> None:
        """Record (path, size, sha256) of each file, in order."""
        for position, (path, size, sha256) in enumerate(sources):
            self._session.add(t.DatasetSource(dataset_id=dataset_id, position=position,
                                              path=path, size=size, sha256=sha256))
        self._session.flush()

    def of(self, dataset_id: int) -> list[tuple[str, int, str]]:
        rows = self._session.execute(
            select(t.DatasetSource).where(t.DatasetSource.dataset_id == dataset_id)
            .order_by(t.DatasetSource.position)).scalars()
        return [(row.path, row.size, row.sha256) for row in rows]
