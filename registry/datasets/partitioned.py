"""Fingerprints computed partition by partition on a Dask cluster (dask.distributed).

Each task fingerprints one partition (a file, or every n-th row group, Avro block or CSV batch of
one file); the partial fingerprints merge pairwise in a fixed order into the whole one, equal
to what a single process computes. A CSV file has no index of its records, so each part of one
parses the whole file and keeps its share: split large CSV data into several files instead.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

from registry.datasets.errors import EmptyDataset
from registry.datasets.fingerprint import (
    DatasetFingerprint,
    check_columns,
    fingerprint_source,
    merge_fingerprints,
)
from registry.datasets.readers import Part, open_source


def fingerprint_part(path: str, schema_json: Mapping[str, Any] | None, format: str | None,
                     keys: Sequence[str], exclude: Sequence[str],
                     part: Part) -> DatasetFingerprint:
    """The fingerprint of one partition; empty when the partition holds no rows."""
    return fingerprint_source(open_source(path, schema_json, format), keys, exclude, part=part)


def fingerprint_partitioned(paths: str | Sequence[str], *, schema_json: Mapping[str, Any] | None,
                            format: str | None = None, keys: Sequence[str] = (),
                            exclude: Sequence[str] = (), partitions: int = 8,
                            client: Any = None) -> DatasetFingerprint:
    """Fingerprint one file split into `partitions` parts, or several files one part each, on
    the Dask client given (or dask's default scheduler)."""
    import dask

    files = [paths] if isinstance(paths, str) else list(paths)
    first = open_source(files[0], schema_json, format)
    schema = dict(first.schema_json)  # every part is read under one schema
    check_columns(first.record, keys, exclude)
    if len(files) == 1:
        jobs = [(files[0], (index, partitions)) for index in range(partitions)]
    else:
        jobs = [(path, (0, 1)) for path in files]
    parts = [dask.delayed(fingerprint_part, pure=True)(path, schema, format, tuple(keys),
                                                       tuple(exclude), part)
             for path, part in jobs]
    while len(parts) > 1:  # a balanced tree of merges, in partition order
        merged = [dask.delayed(merge_fingerprints, pure=True)(parts[i], parts[i + 1])
                  for i in range(0, len(parts) - 1, 2)]
        parts = merged + ([parts[-1]] if len(parts) % 2 else [])
    if client is not None:
        whole = client.compute(parts[0]).result()
    else:
        whole = parts[0].compute()
    if whole.rows == 0:
        raise EmptyDataset("the files hold no records", place=files[0])
    return whole
