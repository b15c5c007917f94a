"""The Brackwater segment schema, records of it, and writers for the three file formats."""

from __future__ import annotations

import csv
import math
from pathlib import Path

import fastavro
import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq

DISTRICTS = ["NORTHGATE", "RIVERSIDE", "OLD_TOWN", "HILLCREST", "SALTMARSH"]
MATERIALS = ["CAST_IRON", "DUCTILE_IRON", "PVC", "HDPE", "ASBESTOS_CEMENT"]

SEGMENT_SCHEMA = {
    "type": "record", "name": "Segment", "namespace": "brackwater.assets",
    "fields": [
        {"name": "segment_id", "type": "string"},
        {"name": "district", "type": "string"},
        {"name": "pipe_material", "type": {"type": "enum", "name": "PipeMaterial",
                                           "symbols": MATERIALS}},
        {"name": "pipe_age_years", "type": "double"},
        {"name": "diameter_mm", "type": "int"},
        {"name": "mean_pressure_kpa", "type": "double"},
        {"name": "soil_corrosivity", "type": {"type": "enum", "name": "SoilCorrosivity",
                                              "symbols": ["LOW", "MODERATE", "HIGH"]}},
        {"name": "repairs_5y", "type": ["null", "int"], "default": None},
        {"name": "burst_within_90d", "type": "int"},
    ],
}


def segment_records(count: int, seed: int = 1, start: int = 0) -> list[dict]:
    rng = np.random.default_rng(seed)
    records = []
    for index in range(start, start + count):
        records.append({
            "segment_id": f"SEG-{index:06d}",
            "district": DISTRICTS[int(rng.integers(5))],
            "pipe_material": MATERIALS[int(rng.integers(4))],  # ASBESTOS_CEMENT never drawn
            "pipe_age_years": float(np.round(rng.uniform(0, 95), 2)),
            "diameter_mm": int(rng.choice([100, 150, 200, 300, 450])),
            "mean_pressure_kpa": float(rng.normal(420, 35)),
            "soil_corrosivity": ["LOW", "MODERATE", "HIGH"][int(rng.integers(3))],
            "repairs_5y": None if rng.random() < 0.1 else int(rng.poisson(1.2)),
            "burst_within_90d": int(rng.random() < 0.08),
        })
    return records


def write_avro(path: Path, records: list[dict], schema: dict = SEGMENT_SCHEMA,
               codec: str = "null") -> Path:
    with open(path, "wb") as handle:
        fastavro.writer(handle, fastavro.parse_schema(schema), records, codec=codec)
    return path


def write_parquet(path: Path, records: list[dict], row_group_size: int | None = None) -> Path:
    pq.write_table(pa.Table.from_pylist(records), path, row_group_size=row_group_size)
    return path


def csv_text(value: object) -> str:
    if value is None:
        return ""
    if isinstance(value, float):
        return "nan" if math.isnan(value) else repr(value)
    return str(value)


def write_csv(path: Path, records: list[dict], schema: dict = SEGMENT_SCHEMA) -> Path:
    names = [field["name"] for field in schema["fields"]]
    with open(path, "w", newline="", encoding="utf-8") as handle:
        writer = csv.writer(handle)
        writer.writerow(names)
        for record in records:
            writer.writerow([csv_text(record[name]) for name in names])
    return path
