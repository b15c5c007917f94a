"""Generate the invented Brackwater demo files: schemas, PFA documents, manifests, datasets and
predictions for `main-burst-risk` and `night-flow-leak`, deterministically from fixed seeds.

Run `python seed_data/generate.py [--out DIR]`; the default writes into seed_data/ itself.
Feature definitions (seed_data/*/features/) are written by hand and are not touched here.
"""

from __future__ import annotations

import argparse
import csv
import hashlib
import json
from dataclasses import dataclass
from pathlib import Path

import fastavro
import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq

from served_traffic import generate_served_traffic  # seed_data/served_traffic.py

# One seed per story element, so tuning one part never reshuffles another.
NETWORK_SEED = 20_267_301
SPLIT_SEED = 20_267_302
METER_AREA_SEED = 20_260_303

KPA_PER_PSI = 6.894757293168361  # 1 psi = 6894.757293168361 Pa (NIST SP 811, appendix B.8)

DISTRICTS = ("NORTHGATE", "RIVERSIDE", "OLD_TOWN", "HILLCREST", "SALTMARSH")
DISTRICT_PREFIX = {"NORTHGATE": "NG", "RIVERSIDE": "RS", "OLD_TOWN": "OT", "HILLCREST": "HC",
                   "SALTMARSH": "SM"}
PIPE_MATERIALS = ("CAST_IRON", "DUCTILE_IRON", "PVC", "HDPE", "ASBESTOS_CEMENT")
SOIL_CORROSIVITY = ("LOW", "MODERATE", "HIGH")
DIAMETERS_MM = (80, 100, 150, 200, 250, 300, 450)

SEGMENT_COUNT = 2400
TRAINING_SEGMENTS = 1000
EVALUATION_SEGMENTS = 950
METER_AREA_COUNT = 260
NIGHT_FLOW_TRAINING = 150
NIGHT_FLOW_EVALUATION = 60

AUTHOR = "ines.okafor"
AVRO_SYNC_MARKER = hashlib.sha256(b"brackwater-seed-data").digest()[:16]  # fixed: byte-stable files


# ----------------------------------------------------------------------------------------------
# Schemas


def pipe_material_enum() -> dict:
    return {"type": "enum", "name": "PipeMaterial", "symbols": list(PIPE_MATERIALS)}


def soil_corrosivity_enum() -> dict:
    return {"type": "enum", "name": "SoilCorrosivity", "symbols": list(SOIL_CORROSIVITY)}


def segment_schema(version: int) -> dict:
    """Input schema `Segment` of main-burst-risk version 1 to 4 (SCENARIO.md)."""
    diameter_type = "string" if version == 4 else "int"
    if version == 3:
        pressure = {"name": "mean_pressure_psi", "type": "double", "aliases": ["mean_pressure_kpa"]}
    else:
        pressure = {"name": "mean_pressure_kpa", "type": "double"}
    fields = [
        {"name": "segment_id", "type": "string"},
        {"name": "district", "type": "string"},
        {"name": "pipe_material", "type": pipe_material_enum()},
        {"name": "pipe_age_years", "type": "double"},
        {"name": "diameter_mm", "type": diameter_type},
        pressure,
        {"name": "pressure_transients_7d", "type": "int"},
        {"name": "soil_corrosivity", "type": soil_corrosivity_enum()},
        {"name": "min_air_temp_c_7d", "type": "double"},
    ]
    if version >= 2:
        fields.append({"name": "repairs_5y", "type": "int", "default": 0})
    return {"type": "record", "name": "Segment", "namespace": "brackwater.assets",
            "doc": "One water-main segment as the feature feed writes it.", "fields": fields}


def burst_risk_schema() -> dict:
    return {"type": "record", "name": "BurstRisk", "namespace": "brackwater.scores",
            "doc": "Probability that a segment bursts within 90 days.",
            "fields": [{"name": "segment_id", "type": "string"},
                       {"name": "burst_probability", "type": "double"}]}


def asset_register_schema() -> dict:
    return {"type": "record", "name": "AssetRegisterEntry", "namespace": "brackwater.assets",
            "doc": "One row of the Brackwater asset register.",
            "fields": [{"name": "segment_id", "type": "string"},
                       {"name": "district", "type": "string"},
                       {"name": "pipe_material", "type": pipe_material_enum()},
                       {"name": "pipe_age_years", "type": "double"},
                       {"name": "diameter_mm", "type": "int"},
                       {"name": "soil_corrosivity", "type": soil_corrosivity_enum()},
                       {"name": "repairs_5y", "type": "int"}]}


def telemetry_extract_schema() -> dict:
    return {"type": "record", "name": "TelemetrySummary", "namespace": "brackwater.telemetry",
            "doc": "Seven-day pressure and weather summary per segment.",
            "fields": [{"name": "segment_id", "type": "string"},
                       {"name": "district", "type": "string"},
                       {"name": "mean_pressure_kpa", "type": "double"},
                       {"name": "pressure_transients_7d", "type": "int"},
                       {"name": "min_air_temp_c_7d", "type": "double"}]}


def labelled_segment_schema() -> dict:
    """Training and evaluation rows: every version 2 input field plus the label."""
    fields = [dict(field) for field in segment_schema(2)["fields"]]
    fields.append({"name": "burst_within_90d", "type": "int"})
    return {"type": "record", "name": "LabelledSegment", "namespace": "brackwater.assets",
            "doc": "A segment with the observed outcome of the following 90 days.", "fields": fields}


def meter_area_schema() -> dict:
    return {"type": "record", "name": "MeterArea", "namespace": "brackwater.network",
            "doc": "One district meter area with its night-flow summary.",
            "fields": [{"name": "dma_id", "type": "string"},
                       {"name": "district", "type": "string"},
                       {"name": "mains_length_km", "type": "double"},
                       {"name": "connections", "type": "int"},
                       {"name": "mean_night_pressure_kpa", "type": "double"},
                       {"name": "min_night_flow_l_h", "type": "double"}]}


def leak_estimate_schema() -> dict:
    return {"type": "record", "name": "LeakEstimate", "namespace": "brackwater.network",
            "doc": "Night flow lost to leakage in one district meter area.",
            "fields": [{"name": "dma_id", "type": "string"}, {"name": "leak_l_h", "type": "double"}]}


def labelled_meter_area_schema() -> dict:
    fields = [dict(field) for field in meter_area_schema()["fields"]]
    fields.append({"name": "leak_l_h", "type": "double"})
    return {"type": "record", "name": "LabelledMeterArea", "namespace": "brackwater.network",
            "doc": "A district meter area with leakage measured by a step test.", "fields": fields}


# ----------------------------------------------------------------------------------------------
# The invented physics of the Brackwater network


@dataclass(frozen=True)
class DistrictProfile:
    """How a district's network looks: share of segments, materials, soil, pressure, weather."""

    share: float
    materials: tuple[float, ...]  # probabilities in PIPE_MATERIALS order
    soil: tuple[float, float, float]
    pressure_kpa: float
    transient_rate: float
    air_temp_c: float


DISTRICT_PROFILES = {
    "NORTHGATE": DistrictProfile(0.20, (0.12, 0.20, 0.38, 0.25, 0.05), (0.60, 0.30, 0.10), 420.0, 1.2, 0.0),
    "RIVERSIDE": DistrictProfile(0.19, (0.25, 0.30, 0.25, 0.10, 0.10), (0.20, 0.40, 0.40), 390.0, 1.5, 1.5),
    "OLD_TOWN": DistrictProfile(0.19, (0.55, 0.15, 0.15, 0.05, 0.10), (0.30, 0.50, 0.20), 450.0, 1.8, 1.0),
    "HILLCREST": DistrictProfile(0.17, (0.20, 0.35, 0.25, 0.15, 0.05), (0.50, 0.35, 0.15), 560.0, 3.5, -3.0),
    "SALTMARSH": DistrictProfile(0.25, (0.35, 0.15, 0.15, 0.10, 0.25), (0.15, 0.35, 0.50), 410.0, 2.2, 0.5),
}

# Typical age range per material (years), following when each was laid in the invented town.
AGE_RANGE_YEARS = {"CAST_IRON": (55.0, 125.0), "DUCTILE_IRON": (15.0, 50.0), "PVC": (5.0, 45.0),
                   "HDPE": (1.0, 25.0), "ASBESTOS_CEMENT": (40.0, 75.0)}
MATERIAL_HAZARD = {"CAST_IRON": 0.9, "DUCTILE_IRON": 0.15, "PVC": 0.0, "HDPE": -0.5,
                   "ASBESTOS_CEMENT": 0.6}
SOIL_HAZARD = {"LOW": 0.0, "MODERATE": 0.3, "HIGH": 0.65}
METALLIC = ("CAST_IRON", "DUCTILE_IRON")


def numbered_within_district(district: np.ndarray, template: str) -> np.ndarray:
    """Identifiers like NG-00017: the district's prefix and a running number within it."""
    counters = {name: 0 for name in DISTRICTS}
    identifiers = np.empty(district.size, dtype=object)
    for row, name in enumerate(district):
        counters[name] += 1
        identifiers[row] = template.format(prefix=DISTRICT_PREFIX[name], number=counters[name])
    return identifiers


def simulate_network(rng: np.random.Generator) -> dict[str, np.ndarray]:
    """Draw every segment of the network, its telemetry and whether it burst within 90 days."""
    n = SEGMENT_COUNT
    district = rng.choice(DISTRICTS, size=n, p=[DISTRICT_PROFILES[d].share for d in DISTRICTS])
    material = np.empty(n, dtype=object)
    soil = np.empty(n, dtype=object)
    for name in DISTRICTS:
        profile = DISTRICT_PROFILES[name]
        rows = np.flatnonzero(district == name)
        material[rows] = rng.choice(PIPE_MATERIALS, size=rows.size, p=profile.materials)
        soil[rows] = rng.choice(SOIL_CORROSIVITY, size=rows.size, p=profile.soil)
    low = np.array([AGE_RANGE_YEARS[m][0] for m in material])
    high = np.array([AGE_RANGE_YEARS[m][1] for m in material])
    age = np.round(low + (high - low) * rng.beta(2.0, 2.0, size=n), 1)
    diameter = rng.choice(DIAMETERS_MM, size=n, p=[0.08, 0.25, 0.27, 0.17, 0.10, 0.08, 0.05])

    base_pressure = np.array([DISTRICT_PROFILES[d].pressure_kpa for d in district])
    pressure = np.round(np.clip(base_pressure + rng.normal(0.0, 55.0, size=n), 180.0, 800.0), 1)
    transient_rate = np.array([DISTRICT_PROFILES[d].transient_rate for d in district])
    transients = rng.poisson(transient_rate * (pressure / 450.0) ** 2).astype(np.int32)
    base_temp = np.array([DISTRICT_PROFILES[d].air_temp_c for d in district])
    # The observation week differs per segment, so each sees its own cold or mild spell.
    min_temp = np.round(base_temp + rng.normal(0.0, 4.0, size=n), 1)

    # Hidden condition of the main (joints, bedding, past workmanship): drives bursts and repairs.
    frailty = rng.normal(0.0, 1.0, size=n)
    is_metallic = np.isin(material, METALLIC)
    repair_rate = np.exp(0.2 + 1.0 * frailty + 0.4 * is_metallic + 0.012 * (age - 40.0))
    repairs_true = rng.poisson(repair_rate).astype(np.int32)
    repairs_recorded = repairs_true.copy()
    # Saltmarsh's repair tickets were re-keyed by hand when its records were merged into the
    # register, and were mostly booked against the newer replacement mains instead of the old
    # mains they were made on: the counts look normal, but point at the wrong pipes.
    saltmarsh = np.flatnonzero(district == "SALTMARSH")
    youngest_first = saltmarsh[np.argsort(age[saltmarsh] + rng.normal(0.0, 15.0, size=saltmarsh.size))]
    repairs_recorded[youngest_first] = np.sort(repairs_true[saltmarsh])[::-1]

    frost = np.maximum(0.0, -min_temp)
    logit = (-3.9
             + np.array([MATERIAL_HAZARD[m] for m in material])
             + np.array([SOIL_HAZARD[s] for s in soil])
             + 0.45 * (is_metallic & (soil == "HIGH"))  # corrosion attacks metal pipe
             + 0.02 * (age - 50.0)
             + 0.004 * (pressure - 450.0)
             + 0.2 * transients
             + 0.17 * frost
             - 0.003 * (diameter - 150.0)
             + 1.6 * frailty)
    burst = (rng.random(n) < 1.0 / (1.0 + np.exp(-logit))).astype(np.int32)

    return {"segment_id": numbered_within_district(district, "{prefix}-{number:05d}"), "district": district.astype(object), "pipe_material": material,
            "pipe_age_years": age, "diameter_mm": diameter.astype(np.int32), "soil_corrosivity": soil,
            "repairs_5y": repairs_recorded, "mean_pressure_kpa": pressure,
            "pressure_transients_7d": transients, "min_air_temp_c_7d": min_temp,
            "burst_within_90d": burst}


# ----------------------------------------------------------------------------------------------
# The logistic model, in numpy exactly as the PFA document computes it


def burst_risk_features(rows: dict[str, np.ndarray], version: int) -> dict[str, np.ndarray]:
    """The feature map of the PFA document: numeric fields, a frost hinge and one-hot enums."""
    pressure_name = "mean_pressure_psi" if version == 3 else "mean_pressure_kpa"
    if version == 3:
        pressure = rows["mean_pressure_kpa"] / KPA_PER_PSI
    else:
        pressure = rows["mean_pressure_kpa"]
    features = {
        "pipe_age_years": rows["pipe_age_years"].astype(float),
        "diameter_mm": rows["diameter_mm"].astype(float),
        pressure_name: pressure.astype(float),
        "pressure_transients_7d": rows["pressure_transients_7d"].astype(float),
        "frost_degrees": np.maximum(0.0, 0.0 - rows["min_air_temp_c_7d"]),
    }
    for material in PIPE_MATERIALS:
        if material != "PVC":  # the reference level
            features[f"material_{material.lower()}"] = (rows["pipe_material"] == material).astype(float)
    for level in SOIL_CORROSIVITY:
        if level != "LOW":
            features[f"soil_{level.lower()}"] = (rows["soil_corrosivity"] == level).astype(float)
    if version >= 2:
        features["repairs_5y"] = rows["repairs_5y"].astype(float)
    return features


@dataclass(frozen=True)
class LinearModel:
    """Coefficients by feature name and a constant, as PFA's model.reg.linear map form holds them."""

    coeff: dict[str, float]
    const: float


def significant(value: float, digits: int = 6) -> float:
    return float(f"{value:.{digits}g}")


def fit_logistic(features: dict[str, np.ndarray], label: np.ndarray, ridge: float = 1.0,
                 iterations: int = 30) -> LinearModel:
    """Ridge-penalised logistic regression by Newton's method (IRLS) on standardised columns."""
    names = list(features)
    raw = np.column_stack([features[name] for name in names])
    centre, scale = raw.mean(axis=0), raw.std(axis=0)
    design = np.column_stack([np.ones(len(label)), (raw - centre) / scale])
    penalty = np.diag([0.0] + [ridge] * len(names))
    beta = np.zeros(design.shape[1])
    for _ in range(iterations):
        probability = 1.0 / (1.0 + np.exp(-design @ beta))
        gradient = design.T @ (label - probability) - penalty @ beta
        hessian = (design * (probability * (1.0 - probability))[:, None]).T @ design + penalty
        step = np.linalg.solve(hessian, gradient)
        beta += step
        if np.max(np.abs(step)) < 1e-10:
            break
    slopes = beta[1:] / scale
    const = beta[0] - float(slopes @ centre)
    return LinearModel({name: significant(s) for name, s in zip(names, slopes)}, significant(const))


def linear_predictor(model: LinearModel, features: dict[str, np.ndarray]) -> np.ndarray:
    total = np.full(len(next(iter(features.values()))), model.const)
    for name, weight in model.coeff.items():
        total = total + weight * features[name]
    return total


def logistic(values: np.ndarray) -> np.ndarray:
    return 1.0 / (1.0 + np.exp(-values))


def in_psi(model: LinearModel) -> LinearModel:
    """The same model reading pressure in psi: one psi is KPA_PER_PSI kPa."""
    coeff = {("mean_pressure_psi" if name == "mean_pressure_kpa" else name):
             (significant(weight * KPA_PER_PSI) if name == "mean_pressure_kpa" else weight)
             for name, weight in model.coeff.items()}
    return LinearModel(coeff, model.const)


def fit_least_squares(features: dict[str, np.ndarray], target: np.ndarray) -> LinearModel:
    names = list(features)
    design = np.column_stack([np.ones(len(target))] + [features[name] for name in names])
    beta, *_ = np.linalg.lstsq(design, target, rcond=None)
    return LinearModel({name: significant(b) for name, b in zip(names, beta[1:])}, significant(beta[0]))


# ----------------------------------------------------------------------------------------------
# PFA documents (Portable Format for Analytics 0.8.1)


def enum_indicator(field: str, enum_name: str, symbol: str) -> dict:
    return {"if": {"==": [f"input.{field}", {"type": enum_name, "value": symbol}]},
            "then": 1.0, "else": 0.0}


def burst_risk_document(version: int, model: LinearModel) -> dict:
    """A PFA scoring engine: build the feature map, apply model.reg.linear, then the logistic."""
    pressure = "mean_pressure_psi" if version == 3 else "mean_pressure_kpa"
    diameter = ({"parse.int": ["input.diameter_mm", 10]} if version == 4 else "input.diameter_mm")
    feature_map: dict[str, object] = {
        "pipe_age_years": "input.pipe_age_years",
        "diameter_mm": diameter,
        pressure: f"input.{pressure}",
        "pressure_transients_7d": "input.pressure_transients_7d",
        "frost_degrees": {"max": [0.0, {"-": [0.0, "input.min_air_temp_c_7d"]}]},
    }
    for material in PIPE_MATERIALS:
        if material != "PVC":
            feature_map[f"material_{material.lower()}"] = enum_indicator(
                "pipe_material", "brackwater.assets.PipeMaterial", material)
    for level in SOIL_CORROSIVITY:
        if level != "LOW":
            feature_map[f"soil_{level.lower()}"] = enum_indicator(
                "soil_corrosivity", "brackwater.assets.SoilCorrosivity", level)
    if version >= 2:
        feature_map["repairs_5y"] = "input.repairs_5y"
    assert set(feature_map) == set(model.coeff), "document and model must name the same features"
    return {
        "name": f"main_burst_risk_v{version}",  # PFA engine names are identifiers
        "method": "map",
        "doc": "Logistic regression on asset and telemetry features (invented Brackwater demo).",
        "input": segment_schema(version),
        "output": burst_risk_schema(),
        "cells": {"model": {"type": {"type": "record", "name": "LogisticCoefficients",
                                     "namespace": "brackwater.models",
                                     "fields": [{"name": "coeff", "type": {"type": "map", "values": "double"}},
                                                {"name": "const", "type": "double"}]},
                            "init": {"coeff": model.coeff, "const": model.const}}},
        "action": [
            {"let": {"features": {"type": {"type": "map", "values": "double"}, "new": feature_map}}},
            {"type": "brackwater.scores.BurstRisk",
             "new": {"segment_id": "input.segment_id",
                     "burst_probability": {"m.link.logit": {"model.reg.linear": ["features", {"cell": "model"}]}}}},
        ],
        "metadata": {"model": "main-burst-risk", "version": str(version)},
    }


def night_flow_features(rows: dict[str, np.ndarray]) -> dict[str, np.ndarray]:
    return {name: rows[name].astype(float) for name in
            ("mains_length_km", "connections", "mean_night_pressure_kpa", "min_night_flow_l_h")}


def night_flow_document(model: LinearModel) -> dict:
    """A PFA linear regression; leakage cannot be negative, so the estimate is clamped at zero."""
    return {
        "name": "night_flow_leak_v1",
        "method": "map",
        "doc": "Linear regression of leakage on night flow (invented Brackwater demo).",
        "input": meter_area_schema(),
        "output": leak_estimate_schema(),
        "cells": {"model": {"type": {"type": "record", "name": "LinearCoefficients",
                                     "namespace": "brackwater.models",
                                     "fields": [{"name": "coeff", "type": {"type": "map", "values": "double"}},
                                                {"name": "const", "type": "double"}]},
                            "init": {"coeff": model.coeff, "const": model.const}}},
        "action": [
            {"let": {"features": {"type": {"type": "map", "values": "double"},
                                  "new": {name: f"input.{name}" for name in model.coeff}}}},
            {"type": "brackwater.network.LeakEstimate",
             "new": {"dma_id": "input.dma_id",
                     "leak_l_h": {"max": [0.0, {"model.reg.linear": ["features", {"cell": "model"}]}]}}},
        ],
        "metadata": {"model": "night-flow-leak", "version": "1"},
    }


# ----------------------------------------------------------------------------------------------
# Manifests


BURST_RISK_RELEASES = {
    1: ("Logistic regression on asset and telemetry features", "3f9c2e1"),
    2: ("Adds the five-year repair count from the asset register", "8d41a07"),
    3: ("Reads mean pressure in psi from the new telemetry gateway", "b72e5c9"),
    4: ("Reads diameter as text from the new register export", "e05f3d2"),
}


def manifest_text(description: str, revision: str, input_schema: str, output_schema: str,
                  features: str, trained_on: str, evaluated_on: str) -> str:
    # TOML basic strings share JSON's escapes for the plain text used here.
    lines = [f"description = {json.dumps(description)}",
             f"code_revision = {json.dumps(revision)}",
             f"author = {json.dumps(AUTHOR)}",
             f"input_schema = {json.dumps(input_schema)}",
             f"output_schema = {json.dumps(output_schema)}",
             f"features = {json.dumps(features)}",
             f"trained_on = [{json.dumps(trained_on)}]",
             f"evaluated_on = [{json.dumps(evaluated_on)}]"]
    return "\n".join(lines) + "\n"


# ----------------------------------------------------------------------------------------------
# District meter areas (night-flow-leak)


CONNECTIONS_PER_KM = {"NORTHGATE": 70.0, "RIVERSIDE": 55.0, "OLD_TOWN": 90.0, "HILLCREST": 45.0,
                      "SALTMARSH": 50.0}


def simulate_meter_areas(rng: np.random.Generator) -> dict[str, np.ndarray]:
    """Night flow = customers' night use + leakage; leakage grows with mains length and pressure."""
    n = METER_AREA_COUNT
    district = rng.choice(DISTRICTS, size=n, p=[DISTRICT_PROFILES[d].share for d in DISTRICTS])
    length = np.round(rng.uniform(4.0, 40.0, size=n), 2)
    density = np.array([CONNECTIONS_PER_KM[d] for d in district])
    connections = np.maximum(20, np.round(length * density * rng.lognormal(0.0, 0.2, size=n))).astype(np.int32)
    base_pressure = np.array([DISTRICT_PROFILES[d].pressure_kpa for d in district]) - 40.0
    pressure = np.round(np.clip(base_pressure + rng.normal(0.0, 45.0, size=n), 200.0, 750.0), 1)
    # Leakage per km rises with pressure (exponent near 1.15, an invented figure in the range
    # practitioners quote); the condition of each area scatters it.
    leak = 22.0 * length * (pressure / 400.0) ** 1.15 * rng.lognormal(0.0, 0.3, size=n)
    customer_use = connections * rng.normal(1.7, 0.15, size=n)
    night_flow = np.round(leak + customer_use + rng.normal(0.0, 15.0, size=n), 1)
    measured_leak = np.round(np.maximum(0.0, leak + rng.normal(0.0, 20.0, size=n)), 1)
    return {"dma_id": numbered_within_district(district, "DMA-{prefix}-{number:03d}"), "district": district.astype(object), "mains_length_km": length,
            "connections": connections, "mean_night_pressure_kpa": pressure,
            "min_night_flow_l_h": night_flow, "leak_l_h": measured_leak}


# ----------------------------------------------------------------------------------------------
# Writers


def take(rows: dict[str, np.ndarray], index: np.ndarray) -> dict[str, np.ndarray]:
    return {name: values[index] for name, values in rows.items()}


def records(rows: dict[str, np.ndarray], schema: dict) -> list[dict]:
    """Plain Python records in the schema's field order (numpy scalars become int/float/str)."""
    names = [field["name"] for field in schema["fields"]]
    count = len(rows[names[0]])
    return [{name: rows[name][i].item() if hasattr(rows[name][i], "item") else rows[name][i]
             for name in names} for i in range(count)]


def write_json(path: Path, document: dict) -> None:
    path.write_text(json.dumps(document, indent=2) + "\n", encoding="utf-8")


def write_avro(path: Path, schema: dict, rows: list[dict]) -> None:
    with path.open("wb") as out:
        fastavro.writer(out, fastavro.parse_schema(schema), rows, codec="deflate",
                        sync_marker=AVRO_SYNC_MARKER)


def write_avro_partitioned(folder: Path, schema: dict, rows: list[dict], key: str) -> None:
    """One Avro file per value of `key`, in `key=value/` folders; the files leave the key out."""
    inner = {**schema, "fields": [field for field in schema["fields"] if field["name"] != key]}
    for value in sorted({row[key] for row in rows}):
        (folder / f"{key}={value}").mkdir(parents=True, exist_ok=True)
        write_avro(folder / f"{key}={value}" / "part-0.avro", inner,
                   [{name: v for name, v in row.items() if name != key} for row in rows
                    if row[key] == value])


def arrow_type(avro_type: object) -> pa.DataType:
    if isinstance(avro_type, dict) and avro_type["type"] == "enum":
        return pa.string()
    return {"string": pa.string(), "int": pa.int32(), "double": pa.float64()}[avro_type]


def write_parquet(path: Path, schema: dict, rows: list[dict]) -> None:
    arrow_schema = pa.schema([pa.field(field["name"], arrow_type(field["type"]), nullable=False)
                              for field in schema["fields"]])
    table = pa.Table.from_pylist(rows, schema=arrow_schema)
    pq.write_table(table, path, compression="zstd")


def write_csv(path: Path, header: list[str], rows: list[list[object]]) -> None:
    with path.open("w", newline="", encoding="utf-8") as out:
        writer = csv.writer(out, lineterminator="\n")
        writer.writerow(header)
        writer.writerows(rows)


def score_text(value: float) -> str:
    return f"{value:.10f}"


# ----------------------------------------------------------------------------------------------
# Assembly


def generate_brackwater(root: Path) -> None:
    folders = {name: root / "brackwater" / name
               for name in ("schemas", "documents", "manifests", "datasets", "predictions")}
    for folder in folders.values():
        folder.mkdir(parents=True, exist_ok=True)

    network = simulate_network(np.random.default_rng(NETWORK_SEED))
    order = np.random.default_rng(SPLIT_SEED).permutation(SEGMENT_COUNT)
    training_index = np.sort(order[:TRAINING_SEGMENTS])
    evaluation_index = np.sort(order[TRAINING_SEGMENTS:TRAINING_SEGMENTS + EVALUATION_SEGMENTS])
    rest = np.sort(order[TRAINING_SEGMENTS + EVALUATION_SEGMENTS:])
    # The live sample comes from the feed; asbestos-cement mains are scored by a separate
    # replacement programme and never reach it.
    live_index = rest[network["pipe_material"][rest] != "ASBESTOS_CEMENT"]

    schemas = {
        "segment-v1": segment_schema(1), "segment-v2": segment_schema(2),
        "segment-v3": segment_schema(3), "segment-v4": segment_schema(4),
        "burst-risk": burst_risk_schema(),
        "brackwater-asset-register": asset_register_schema(),
        "brackwater-telemetry-extract": telemetry_extract_schema(),
        "brackwater-training-set": labelled_segment_schema(),
        "brackwater-evaluation-set": labelled_segment_schema(),
        "brackwater-live-sample": segment_schema(2),
    }
    for name, schema in schemas.items():
        write_json(folders["schemas"] / f"{name}.avsc", schema)

    register = asset_register_schema()
    write_csv(folders["datasets"] / "brackwater-asset-register.csv",
              [field["name"] for field in register["fields"]],
              [list(record.values()) for record in records(network, register)])
    write_avro(folders["datasets"] / "brackwater-telemetry-extract.avro", telemetry_extract_schema(),
               records(network, telemetry_extract_schema()))
    # The same extract as the telemetry team keeps it: a folder partitioned by district.
    write_avro_partitioned(folders["datasets"] / "brackwater-telemetry-extract", telemetry_extract_schema(),
                           records(network, telemetry_extract_schema()), "district")
    labelled = labelled_segment_schema()
    training, evaluation = take(network, training_index), take(network, evaluation_index)
    write_parquet(folders["datasets"] / "brackwater-training-set.parquet", labelled,
                  records(training, labelled))
    write_parquet(folders["datasets"] / "brackwater-evaluation-set.parquet", labelled,
                  records(evaluation, labelled))
    write_avro(folders["datasets"] / "brackwater-live-sample.avro", segment_schema(2),
               records(take(network, live_index), segment_schema(2)))

    label = training["burst_within_90d"]
    models = {1: fit_logistic(burst_risk_features(training, 1), label),
              2: fit_logistic(burst_risk_features(training, 2), label)}
    models[3] = in_psi(models[2])
    models[4] = models[2]
    for version, model in models.items():
        write_json(folders["documents"] / f"main-burst-risk-v{version}.pfa.json",
                   burst_risk_document(version, model))
        description, revision = BURST_RISK_RELEASES[version]
        (folders["manifests"] / f"main-burst-risk-v{version}.toml").write_text(manifest_text(
            description, revision, f"../schemas/segment-v{version}.avsc", "../schemas/burst-risk.avsc",
            f"../features/main-burst-risk-v{version}.toml", "brackwater-training-set",
            "brackwater-evaluation-set"), encoding="utf-8")

    generate_served_traffic(root, network, models, burst_risk_features, logistic,
                            linear_predictor)

    for version in (1, 2, 3):
        scores = logistic(linear_predictor(models[version], burst_risk_features(evaluation, version)))
        write_csv(folders["predictions"] / f"main-burst-risk-v{version}.csv",
                  ["row_id", "label", "score", "district"],
                  [[segment, int(outcome), score_text(score), district] for segment, outcome, score, district
                   in zip(evaluation["segment_id"], evaluation["burst_within_90d"], scores,
                          evaluation["district"])])


def generate_night_flow(root: Path) -> None:
    folders = {name: root / "night_flow" / name
               for name in ("schemas", "documents", "manifests", "datasets", "predictions")}
    for folder in folders.values():
        folder.mkdir(parents=True, exist_ok=True)

    areas = simulate_meter_areas(np.random.default_rng(METER_AREA_SEED))
    training = take(areas, np.arange(0, NIGHT_FLOW_TRAINING))
    evaluation = take(areas, np.arange(NIGHT_FLOW_TRAINING, NIGHT_FLOW_TRAINING + NIGHT_FLOW_EVALUATION))
    live = take(areas, np.arange(NIGHT_FLOW_TRAINING + NIGHT_FLOW_EVALUATION, METER_AREA_COUNT))

    schemas = {"meter-area-v1": meter_area_schema(), "leak-estimate": leak_estimate_schema(),
               "night-flow-training-set": labelled_meter_area_schema(),
               "night-flow-evaluation-set": labelled_meter_area_schema(),
               "night-flow-live-sample": meter_area_schema()}
    for name, schema in schemas.items():
        write_json(folders["schemas"] / f"{name}.avsc", schema)

    write_parquet(folders["datasets"] / "night-flow-training-set.parquet", labelled_meter_area_schema(),
                  records(training, labelled_meter_area_schema()))
    write_parquet(folders["datasets"] / "night-flow-evaluation-set.parquet", labelled_meter_area_schema(),
                  records(evaluation, labelled_meter_area_schema()))
    write_avro(folders["datasets"] / "night-flow-live-sample.avro", meter_area_schema(),
               records(live, meter_area_schema()))

    model = fit_least_squares(night_flow_features(training), training["leak_l_h"])
    write_json(folders["documents"] / "night-flow-leak-v1.pfa.json", night_flow_document(model))
    (folders["manifests"] / "night-flow-leak-v1.toml").write_text(manifest_text(
        "Linear regression of leakage on minimum night flow, connections, mains length and pressure",
        "5c08e4b", "../schemas/meter-area-v1.avsc", "../schemas/leak-estimate.avsc",
        "../features/night-flow-leak-v1.toml", "night-flow-training-set", "night-flow-evaluation-set"),
        encoding="utf-8")

    prediction = np.maximum(0.0, linear_predictor(model, night_flow_features(evaluation)))
    write_csv(folders["predictions"] / "night-flow-leak-v1.csv", ["row_id", "label", "prediction"],
              [[dma, f"{label:.1f}", f"{value:.4f}"] for dma, label, value
               in zip(evaluation["dma_id"], evaluation["leak_l_h"], prediction)])


def generate_contracts(root: Path) -> None:
    """The contracts chapter: the telemetry team's feed `segment-features` (v1 as main-burst-risk
    v1 reads, v2 adding repairs_5y, a proposed v3 dropping soil_corrosivity) and the reader
    schemas of the consumer `work-order-planner` (its v2 requires a field no version writes)."""
    folder = root / "brackwater" / "contracts"
    folder.mkdir(parents=True, exist_ok=True)
    proposed = segment_schema(2)
    proposed["fields"] = [f for f in proposed["fields"] if f["name"] != "soil_corrosivity"]
    planner = burst_risk_schema()
    planner["doc"] = "Burst risk as the work-order planner reads it."
    wanting_cost = json.loads(json.dumps(planner))
    wanting_cost["fields"].append({"name": "expected_repair_cost_gbp", "type": "double"})
    for name, schema in {"segment-features-v1": segment_schema(1),
                         "segment-features-v2": segment_schema(2),
                         "segment-features-v3-proposed": proposed,
                         "work-order-planner-v1": planner,
                         "work-order-planner-v2-proposed": wanting_cost}.items():
        write_json(folder / f"{name}.avsc", schema)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--out", type=Path, default=Path(__file__).resolve().parent,
                        help="directory to write into (default: seed_data/ itself)")
    arguments = parser.parse_args()
    generate_brackwater(arguments.out)
    generate_night_flow(arguments.out)
    generate_contracts(arguments.out)


if __name__ == "__main__":
    main()
