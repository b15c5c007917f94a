"""The compact columns kept of served rows and outcomes, per batch and window.

An Arrow IPC stream, compressed with zstd: `row_hash` (uint64) with the prediction columns as
float64 (score, prediction, or p_<class>), or with `label` for outcomes; the served rows of a
batch's window in one record batch per part read (StreamEncoder). About 12 to 16 bytes a
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


class StreamEncoder:
    """`encode`, a part at a time: a window's rows are written as their parts come, each part
    a record batch of the one stream, so that little is left to encode once the last is in.
    The stream of one part is byte for byte `encode` of its columns; `decode` reads any."""

    def __init__(self) -> None:
        self._sink = pa.BufferOutputStream()
        self._writer: pa.ipc.RecordBatchStreamWriter | None = None

    def write(self, columns: Mapping[str, np.ndarray | pa.Array]) -> None:
        table = pa.table({name: values for name, values in columns.items()})
        if self._writer is None:
            self._writer = pa.ipc.new_stream(self._sink, table.schema, options=_OPTIONS)
        self._writer.write_table(table)

    def finish(self) -> bytes:
        assert self._writer is not None  # a window holds at least one part
        self._writer.close()
        return self._sink.getvalue().to_pybytes()


def decode(content: bytes) -> pa.Table:
    with pa.ipc.open_stream(pa.py_buffer(content)) as reader:
        return reader.read_all()


def concatenated(contents: list[bytes]) -> pa.Table | None:
    tables = [decode(content) for content in contents]
    return pa.concat_tables(tables, promote_options="default") if tables else None
