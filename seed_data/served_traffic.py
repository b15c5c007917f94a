"""Fourteen days of served traffic for `main-burst-risk`, and the outcomes that follow a week late.

v1 is live and v2 scores the same segments in shadow; each day's batch holds both versions'
scores with the segment's inputs. From day 10 the pressure sensors of Northgate and Riverside
read high (the calibration fault that leads to the recall of the telemetry extract), so the
live `mean_pressure_kpa` drifts away from training. Outcomes of each day's rows arrive seven
days later, with a few for segments the feed never carried. Written by generate.py.
"""

from __future__ import annotations

from datetime import UTC, datetime, timedelta
from pathlib import Path

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq

TRAFFIC_SEED = 20_261_102
FIRST_DAY = datetime(2026, 11, 2, tzinfo=UTC)
DAYS = 14
SEGMENTS_PER_DAY = 400
FAULT_FROM_DAY = 10
FAULTY_DISTRICTS = ("NORTHGATE", "RIVERSIDE")
FAULT_FACTOR = 1.3  # the miscalibrated sensors read 30% high
OUTCOME_DELAY_DAYS = 7
UNKNOWN_OUTCOMES_PER_DAY = 4
INPUTS = ("segment_id", "district", "pipe_material", "pipe_age_years", "diameter_mm",
          "mean_pressure_kpa", "pressure_transients_7d", "soil_corrosivity", "min_air_temp_c_7d",
          "repairs_5y")


def served_day(day: int) -> datetime:
    return FIRST_DAY + timedelta(days=day - 1)


def _day_rows(network: dict, rng: np.random.Generator, day: int) -> dict[str, np.ndarray]:
    """One day's telemetry for a sample of segments: pressure, transients and frost vary."""
    index = np.sort(rng.choice(len(network["segment_id"]), SEGMENTS_PER_DAY, replace=False))
    rows = {name: network[name][index] for name in network}
    true_pressure = np.round(np.clip(rows["mean_pressure_kpa"] + rng.normal(0, 12, len(index)),
                                     180.0, 800.0), 1)
    rows["true_pressure_kpa"] = true_pressure
    seen = true_pressure.copy()
    if day >= FAULT_FROM_DAY:
        faulty = np.isin(rows["district"], FAULTY_DISTRICTS)
        seen[faulty] = np.round(seen[faulty] * FAULT_FACTOR, 1)
    rows["mean_pressure_kpa"] = seen
    rows["pressure_transients_7d"] = rng.poisson(
        np.maximum(rows["pressure_transients_7d"], 0.3)).astype(np.int32)
    chill = -0.05 * day  # November gets a little colder day by day
    rows["min_air_temp_c_7d"] = np.round(rows["min_air_temp_c_7d"] + chill +
                                         rng.normal(0, 0.5, len(index)), 1)
    return rows


def generate_served_traffic(root: Path, network: dict, models: dict, features, logistic,
                            linear_predictor) -> None:
    """Write served/served-day-NN.parquet and outcomes/outcomes-day-NN.csv under brackwater/."""
    served_folder = root / "brackwater" / "served"
    outcome_folder = root / "brackwater" / "outcomes"
    served_folder.mkdir(parents=True, exist_ok=True)
    outcome_folder.mkdir(parents=True, exist_ok=True)
    rng = np.random.default_rng(TRAFFIC_SEED)
    for day in range(1, DAYS + 1):
        rows = _day_rows(network, rng, day)
        scores = {v: logistic(linear_predictor(models[v], features(rows, v))) for v in (1, 2)}
        truth_rows = dict(rows, mean_pressure_kpa=rows["true_pressure_kpa"])
        truth = logistic(linear_predictor(models[2], features(truth_rows, 2)) + 0.4)
        start = served_day(day) + timedelta(hours=6)
        seconds = np.sort(rng.integers(0, 16 * 3600, SEGMENTS_PER_DAY))
        served_at = [start + timedelta(seconds=int(s)) for s in seconds]
        row_ids = [f"{segment}@{served_day(day):%Y-%m-%d}" for segment in rows["segment_id"]]
        columns: dict[str, list] = {"row_id": [], "served_at": [], "version": [], "score": []}
        columns.update({name: [] for name in INPUTS})
        for version in (1, 2):
            columns["row_id"] += row_ids
            columns["served_at"] += served_at
            columns["version"] += [version] * SEGMENTS_PER_DAY
            columns["score"] += [round(float(s), 10) for s in scores[version]]
            for name in INPUTS:
                columns[name] += rows[name].tolist()
        table = pa.table({
            "row_id": pa.array(columns["row_id"], pa.string()),
            "served_at": pa.array(columns["served_at"], pa.timestamp("us", tz="UTC")),
            "version": pa.array(columns["version"], pa.int64()),
            "score": pa.array(columns["score"], pa.float64()),
            **{name: pa.array(columns[name], _arrow_type(name)) for name in INPUTS}})
        pq.write_table(table, served_folder / f"served-day-{day:02d}.parquet",
                       compression="zstd")
        labels = (rng.random(SEGMENTS_PER_DAY) < truth).astype(int)
        observed = served_day(day + OUTCOME_DELAY_DAYS) + timedelta(hours=8)
        lines = ["row_id,label,observed_at"]
        lines += [f"{row_id},{label},{observed:%Y-%m-%dT%H:%M:%SZ}"
                  for row_id, label in zip(row_ids, labels)]
        lines += [f"AC-{90000 + day * 10 + k:05d}@{served_day(day):%Y-%m-%d},0,"
                  f"{observed:%Y-%m-%dT%H:%M:%SZ}" for k in range(UNKNOWN_OUTCOMES_PER_DAY)]
        (outcome_folder / f"outcomes-day-{day:02d}.csv").write_text("\n".join(lines) + "\n",
                                                                     encoding="utf-8")


def _arrow_type(name: str) -> pa.DataType:
    if name in ("diameter_mm", "pressure_transients_7d", "repairs_5y"):
        return pa.int32()
    if name in ("pipe_age_years", "mean_pressure_kpa", "min_air_temp_c_7d"):
        return pa.float64()
    return pa.string()
