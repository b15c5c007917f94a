"""Served batches and outcome files for the tests, written with pyarrow."""

from __future__ import annotations

from datetime import UTC, datetime, timedelta
from pathlib import Path

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq


def served_table(row_ids, served_at, versions, scores, **inputs) -> pa.Table:
    columns = {
        "row_id": pa.array(list(row_ids), pa.string()),
        "served_at": pa.array(list(served_at), pa.timestamp("us", tz="UTC")),
        "version": pa.array(list(versions), pa.int64()),
        "score": pa.array(list(scores), pa.float64()),
    }
    for name, values in inputs.items():
        columns[name] = pa.array(list(values))
    return pa.table(columns)


def write_served(path: Path, table: pa.Table) -> Path:
    pq.write_table(table, path)
    return path


def shadow_day(path: Path, start: datetime, rows: int, *, seed: int = 1, noise: float = 0.05,
               versions: tuple[int, ...] = (1, 2), prefix: str = "r") -> tuple[Path, dict]:
    """One batch in which every version scores the same rows; returns the scores too."""
    rng = np.random.default_rng(seed)
    base = rng.random(rows)
    ids = [f"{prefix}{i:06d}" for i in range(rows)]
    times = [start + timedelta(seconds=i) for i in range(rows)]
    scores = {}
    parts = []
    for number in versions:
        values = np.clip(base + (rng.normal(0, noise, rows) if number != versions[0] else 0),
                         0, 1)
        scores[number] = values
        parts.append(served_table(ids, times, [number] * rows, values,
                                  segment_id=[f"S-{i % 97:03d}" for i in range(rows)],
                                  diameter_mm=pa.array((100 + (np.arange(rows) % 5) * 50)
                                                       .astype(np.int32))))
    return write_served(path, pa.concat_tables(parts)), {"ids": ids, "scores": scores,
                                                          "base": base}


def write_outcomes(path: Path, ids, labels, observed_at: datetime | None = None) -> Path:
    lines = ["row_id,label" + (",observed_at" if observed_at else "")]
    stamp = f",{observed_at:%Y-%m-%dT%H:%M:%SZ}" if observed_at else ""
    lines += [f"{i},{label}{stamp}" for i, label in zip(ids, labels)]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def now() -> datetime:
    return datetime.now(UTC)
