"""The compact columns kept of served rows and outcomes, per batch and window.

An Arrow IPC stream, compressed with zstd: `row_hash` (uint64) with the prediction columns as
float64 (score, prediction, or p_<class>), or with `label` for outcomes. About 12 to 16 bytes a
row before compression; the catalogue drops them after the policy's retention.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np
import pyarrow as pa

_OPTIONS = pa.ipc.IpcWriteOptions(compression="zstd")


def encode(columns: Mapping[str, np.ndarray | pa.Array]) -> bytes:
    table = pa.table({name: values for name, values in columns.items()})
    sink = pa.BufferOutputStream()
    with pa.ipc.new_stream(sink, table.schema, options=_OPTIONS) as writer:
        writer.write_table(table)
    return sink.getvalue().to_pybytes()


def decode(content: bytes) -> pa.Table:
    with pa.ipc.open_stream(pa.py_buffer(content)) as reader:
        return reader.read_all()


def concatenated(contents: list[bytes]) -> pa.Table | None:
    tables = [decode(content) for content in contents]
    return pa.concat_tables(tables, promote_options="default") if tables else None
