"""Imported by each local worker process as it starts, before its first job.

Fingerprinting a tiny batch of every common column type loads the compiled kernels (numba's
cache) while the worker would otherwise wait for its first job to arrive.
"""

from __future__ import annotations

import pyarrow as pa

from registry.datasets import jobs  # noqa: F401 - what the workers run
from registry.datasets.fingerprint import fingerprint_batches
from registry.datasets.types import record_type

_TYPES = ["double", "long", "int", "float", "string", "boolean",
          {"type": "enum", "name": "Warm", "symbols": ["A", "B"]}]


def _warm() -> None:
    fields = [{"name": f"plain_{i}", "type": t} for i, t in enumerate(_TYPES)]
    fields += [{"name": f"nullable_{i}", "type": ["null", t if isinstance(t, str) else "Warm"]}
               for i, t in enumerate(_TYPES)]
    record = record_type({"type": "record", "name": "WarmStart", "fields": fields})
    values: dict[str, list[object]] = {
        "double": [0.5, 1.5, 2.5, 3.5], "long": [1, 2, 3, 4], "int": [1, 2, 3, 4],
        "float": [0.5, 1.5, 2.5, 3.5], "string": ["a", "b", "a", "c"],
        "boolean": [True, False, True, True]}
    columns = []
    for _name, value_type in record.fields:
        column = values.get(value_type.avro, ["A", "B", "A", "B"])
        if value_type.nullable:
            column = column[:3] + [None]
        columns.append(pa.array(column, type=value_type.arrow_type()))
    batch = pa.RecordBatch.from_arrays(columns, schema=record.arrow_schema())
    fingerprint_batches([batch], record, keys=["plain_4"], exclude=["plain_0"], threads=False)


_warm()
