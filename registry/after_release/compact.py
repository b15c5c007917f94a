"""The compact columns kept of served rows and outcomes, per batch and window.

An Arrow IPC stream: `row_hash` (uint64) with the prediction columns as float64 (score,
prediction, or p_<class>), or with `label` for outcomes; the served rows of a batch's window in
one record batch per part read (StreamEncoder). About 12 to 16 bytes a row; the catalogue drops
them after the policy's retention.

Outcomes are compressed with zstd (their labels repeat). Served rows are not: hashes and scores
are as good as random bytes, so zstd took 10.5 ms of CPU per million rows to save 3% of their
16.8 MB (measured), less than those 3% cost to write, copy at the checkpoint and digest. Either
stream reads back with `decode`: an Arrow IPC reader finds each buffer's compression in the
stream itself. Rows stored compressed by earlier releases stay as they were.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np
import pyarrow as pa

_OPTIONS = pa.ipc.IpcWriteOptions(compression="zstd")
_UNCOMPRESSED = pa.ipc.IpcWriteOptions(compression=None)


def encode(columns: Mapping[str, np.ndarray | pa.Array]) -> bytes:
    table = pa.table({name: values for name, values in columns.items()})
    sink = pa.BufferOutputStream()
    with pa.ipc.new_stream(sink, table.schema, options=_OPTIONS) as writer:
        writer.write_table(table)
    return sink.getvalue().to_pybytes()


class StreamEncoder:
    """The served rows of a window, a part at a time: written as their parts come, each part a
    record batch of the one stream, so that little is left to encode once the last is in.
    Uncompressed (see above); `decode` reads it."""

    def __init__(self) -> None:
        self._sink = pa.BufferOutputStream()
        self._writer: pa.ipc.RecordBatchStreamWriter | None = None

    def write(self, columns: Mapping[str, np.ndarray | pa.Array]) -> None:
        table = pa.table({name: values for name, values in columns.items()})
        if self._writer is None:
            self._writer = pa.ipc.new_stream(self._sink, table.schema, options=_UNCOMPRESSED)
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
