"""The compact rows kept of served batches and outcomes (registry/after_release/compact.py)."""

from __future__ import annotations

import numpy as np
import pyarrow as pa

from registry.after_release import compact


def _served(rows: int, seed: int) -> dict[str, np.ndarray]:
    rng = np.random.default_rng(seed)
    return {"row_hash": rng.integers(0, 2**63, rows, dtype=np.uint64), "score": rng.random(rows)}


def test_a_window_written_part_by_part_reads_back_as_its_rows_in_order():
    parts = [_served(1000, 1), _served(10, 2), _served(500, 3)]
    encoder = compact.StreamEncoder()
    for part in parts:
        encoder.write(part)
    table = compact.decode(encoder.finish())
    assert table.num_rows == 1510
    for name in ("row_hash", "score"):
        expected = np.concatenate([part[name] for part in parts])
        np.testing.assert_array_equal(table.column(name).to_numpy(), expected)


def test_served_rows_are_kept_uncompressed_and_outcomes_compressed():
    served = compact.StreamEncoder()
    served.write(_served(4096, 4))
    stream = served.finish()
    # Arrow IPC (format documentation, Compression): an uncompressed body is the columns'
    # buffers themselves, 16 bytes a row here, and the stream names no codec
    assert 16 * 4096 <= len(stream) < 16 * 4096 + 2048
    labels = {"row_hash": _served(4096, 5)["row_hash"], "label": np.zeros(4096, np.int64)}
    assert len(compact.encode(labels)) < len(stream) * 0.75  # the zero labels compress


def test_rows_stored_compressed_by_an_earlier_release_still_read_back():
    columns = _served(2000, 6)
    sink = pa.BufferOutputStream()
    table = pa.table(columns)
    with pa.ipc.new_stream(sink, table.schema,
                           options=pa.ipc.IpcWriteOptions(compression="zstd")) as writer:
        writer.write_table(table)
    read = compact.decode(sink.getvalue().to_pybytes())
    np.testing.assert_array_equal(read.column("score").to_numpy(), columns["score"])
    assert compact.concatenated([sink.getvalue().to_pybytes(), _stream(columns)]).num_rows == 4000


def _stream(columns: dict[str, np.ndarray]) -> bytes:
    encoder = compact.StreamEncoder()
    encoder.write(columns)
    return encoder.finish()
