"""The Brackwater catalogue for lineage and web tests: use cases where they exist, rows otherwise.

Datasets, evaluations, gate reports and stage moves have no use case on this branch yet, so they
are written as rows, shaped as those use cases write them.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from datetime import UTC, datetime, timedelta
from pathlib import Path

import numpy as np

from registry.manifest import Manifest
from registry.service import models, registration
from registry.service.actors import Actor
from registry.service.roles import grant_role
from registry.store import tables as t
from registry.store.catalogue import Catalogue
from registry.store.unit_of_work import UnitOfWork

SEED = Path(__file__).resolve().parents[2] / "seed_data"
BRACKWATER = SEED / "brackwater"
NIGHT_FLOW = SEED / "night_flow"
START = datetime(2026, 3, 2, 9, 0, tzinfo=UTC)

INES = Actor("ines.okafor", frozenset({"publisher"}))
TOMAS = Actor("tomas.lindqvist", frozenset({"approver"}))
MARA = Actor("mara.kowalczyk", frozenset({"admin"}))

DISTRICTS = ["NORTHGATE", "RIVERSIDE", "OLD_TOWN", "HILLCREST", "SALTMARSH"]


@dataclass(frozen=True)
class DatasetSpec:
    name: str
    role: str
    folder: Path
    rows: int
    parents: tuple[str, ...] = ()


BRACKWATER_DATASETS = (
    DatasetSpec("brackwater-asset-register", "source", BRACKWATER, 2000),
    DatasetSpec("brackwater-telemetry-extract", "source", BRACKWATER, 2000),
    DatasetSpec("brackwater-training-set", "training", BRACKWATER, 1400,
                ("brackwater-asset-register", "brackwater-telemetry-extract")),
    DatasetSpec("brackwater-evaluation-set", "evaluation", BRACKWATER, 600,
                ("brackwater-asset-register", "brackwater-telemetry-extract")),
    DatasetSpec("brackwater-live-sample", "live-sample", BRACKWATER, 500),
)
NIGHT_FLOW_DATASETS = (
    DatasetSpec("night-flow-training-set", "training", NIGHT_FLOW, 300),
    DatasetSpec("night-flow-evaluation-set", "evaluation", NIGHT_FLOW, 120),
    DatasetSpec("night-flow-live-sample", "live-sample", NIGHT_FLOW, 90),
)


def _profile(schema: dict, rows: int, seed: int) -> dict:
    """A plausible column profile with histograms, deterministic per dataset."""
    generator = np.random.default_rng(seed)
    profile = {}
    for field in schema["fields"]:
        kind = field["type"]
        if isinstance(kind, dict) and kind.get("type") == "enum":
            counts = generator.multinomial(rows, np.ones(len(kind["symbols"])) / len(kind["symbols"]))
            profile[field["name"]] = {"type": "enum", "count": rows, "nulls": 0,
                                      "symbols": dict(zip(kind["symbols"], map(int, counts)))}
        elif kind in ("int", "long", "double", "float"):
            values = generator.gamma(3.0, 10.0, size=rows)
            counts, edges = np.histogram(values, bins=12)
            profile[field["name"]] = {
                "type": kind, "count": rows, "nulls": 0, "min": float(values.min()),
                "max": float(values.max()), "mean": float(values.mean()),
                "histogram": {"edges": [float(e) for e in edges],
                              "counts": [int(c) for c in counts]}}
        elif field["name"] == "district":
            counts = generator.multinomial(rows, np.ones(5) / 5)
            profile[field["name"]] = {"type": "string", "count": rows, "nulls": 0,
                                      "categories": dict(zip(DISTRICTS, map(int, counts)))}
        else:
            profile[field["name"]] = {"type": "string", "count": rows, "nulls": 0}
    return profile


def add_dataset_row(uow: UnitOfWork, spec: DatasetSpec, when: datetime, seed: int) -> t.Dataset:
    schema_text = (spec.folder / "schemas" / f"{spec.name}.avsc").read_text()
    schema = json.loads(schema_text)
    fingerprint = {"rows": spec.rows, "content_digest": f"{seed:064x}",
                   "schema_fingerprint": f"{seed + 7:064x}", "profile": _profile(schema, spec.rows, seed)}
    digest = uow.blobs.put(json.dumps(fingerprint, sort_keys=True).encode())
    row = t.Dataset(name=spec.name, role=spec.role, source_uri=f"datasets/{spec.name}",
                    rows=spec.rows, content_digest=fingerprint["content_digest"],
                    schema_fingerprint=fingerprint["schema_fingerprint"],
                    schema_json=json.dumps(schema, sort_keys=True), fingerprint_digest=digest,
                    registration_digest=f"{seed + 11:064x}", created_at=when,
                    created_by=INES.name)
    uow.session.add(row)
    uow.session.flush()
    for parent in spec.parents:
        parent_row = uow.session.query(t.Dataset).filter_by(name=parent).one()
        uow.session.add(t.DatasetParent(child_id=row.id, parent_id=parent_row.id))
    uow.session.flush()
    uow.audit.append(INES.name, "dataset.add", f"dataset/{spec.name}", {"rows": spec.rows})
    return row


def _features(schema: dict) -> str:
    units = {"pipe_age_years": "a", "diameter_mm": "mm", "mean_pressure_kpa": "kPa",
             "mean_pressure_psi": "[psi]", "pressure_transients_7d": "{count}",
             "min_air_temp_c_7d": "Cel", "repairs_5y": "{count}", "mains_length_km": "km",
             "connections": "{count}", "mean_night_pressure_kpa": "kPa",
             "min_night_flow_l_h": "L/h"}
    features = {}
    for field in schema["fields"]:
        definition = {"description": f"{field['name'].replace('_', ' ')} of the record",
                      "nullable": False, "source": "asset register or telemetry"}
        if field["name"] in units:
            definition["unit"] = units[field["name"]]
            definition["domain"] = {"min": 0, "max": 1000}
        elif isinstance(field["type"], dict) and field["type"].get("type") == "enum":
            definition["domain"] = {"categories": field["type"]["symbols"]}
        features[field["name"]] = definition
    return json.dumps(features, sort_keys=True)


def register(catalogue: Catalogue, model: str, folder: Path, number: int, input_schema: str,
             output_schema: str, trained_on: str, evaluated_on: str,
             parent: int | None = None, description: str = "") -> int:
    document = folder / "documents" / f"{model}-v{number}.pfa.json"
    schema_text = (folder / "schemas" / input_schema).read_text()
    manifest = Manifest(input_schema=input_schema, output_schema=output_schema,
                        description=description or f"{model} version {number}",
                        code_revision=f"{number:07x}", author=INES.name,
                        trained_on=(trained_on,), evaluated_on=(evaluated_on,),
                        parent_version=parent)
    request = registration.RegistrationRequest(
        model=model, document=document.read_bytes(), document_name=document.name,
        manifest=manifest, input_schema_text=schema_text,
        output_schema_text=(folder / "schemas" / output_schema).read_text())
    outcome = registration.register_version(catalogue, request, INES)
    with UnitOfWork(catalogue) as uow:
        row = uow.session.query(t.Version).filter_by(number=outcome.version).join(
            t.Model, t.Model.id == t.Version.model_id).filter(t.Model.name == model).one()
        # Feature definitions have no reader on this branch yet: store what one would.
        row.features_json = _features(json.loads(schema_text))
        uow.commit()
    return outcome.version


def _metrics(seed: int, task: str) -> str:
    """Shaped as the evaluation use case stores it (DESIGN.md, `metrics --json`)."""
    generator = np.random.default_rng(seed)
    if task == "binary":
        auc = 0.70 + 0.02 * seed
        metrics = {"roc_auc": auc, "average_precision": auc - 0.3, "log_loss": 0.31,
                   "brier": 0.09, "accuracy": 0.88}
        comparison = {} if seed == 1 else {"roc_auc": {
            "difference": 0.02, "ci_low": 0.004, "ci_high": 0.036, "p_value": 0.014,
            "method": "delong"}}
        slices = {"column": "district", "correction": "holm-bonferroni", "values": {
            d: {"n": 120, "metrics": {"roc_auc": auc + float(generator.normal(0, 0.02))}}
            for d in DISTRICTS}}
    else:
        metrics = {"rmse": 41.5, "mae": 30.2, "r2": 0.61}
        comparison, slices = {}, {}
    return json.dumps({"task": task, "n": 600, "metrics": metrics, "comparison": comparison,
                       "slices": slices})


def _report(model: str, number: int, stage: str, passed: bool, when: datetime) -> str:
    results = [
        {"gate": "schema-reads-feed", "status": "passed", "passed": True, "waived": False,
         "summary": "reads what the live feed writes", "evidence": {"problems": []},
         "notes": [], "waiver": None},
        {"gate": "feature-meaning", "status": "passed" if passed else "failed", "passed": passed,
         "waived": False,
         "summary": "no feature changed meaning" if passed else "mean_pressure unit changed",
         "evidence": {"changes": [] if passed else ["kPa -> [psi]"], "checked": 9},
         "notes": [], "waiver": None},
    ]
    return json.dumps({"model": model, "version": number, "stage": stage, "passed": passed,
                       "actor": TOMAS.name, "evaluated_at": when.isoformat(), "results": results,
                       "waivers": []})


class StageMoves:
    """Writes gate reports, holdings and stage events as the stage use cases do."""

    def __init__(self, uow: UnitOfWork, model: str) -> None:
        self.uow = uow
        self.model = uow.session.query(t.Model).filter_by(name=model).one()
        self.clock = START + timedelta(days=10)

    def _version(self, number: int) -> t.Version:
        return self.uow.session.query(t.Version).filter_by(model_id=self.model.id,
                                                           number=number).one()

    def _tick(self) -> datetime:
        self.clock += timedelta(hours=6)
        return self.clock

    def attempt(self, number: int, stage: str, passed: bool = True, exclusive: bool = False) -> None:
        version = self._version(number)
        when = self._tick()
        report = t.GateReportRow(model_id=self.model.id, version_id=version.id, stage=stage,
                                 attempt="promote", passed=passed,
                                 report_json=_report(self.model.name, number, stage, passed, when),
                                 created_at=when, created_by=TOMAS.name)
        self.uow.session.add(report)
        self.uow.session.flush()
        if not passed:
            return
        for holding in self.uow.session.query(t.StageHolding).filter_by(model_id=self.model.id):
            if holding.version_id == version.id or (exclusive and holding.stage == stage):
                event = "moved-on" if holding.version_id == version.id else "replaced"
                self.uow.session.add(t.StageEvent(
                    model_id=self.model.id, version_id=holding.version_id, stage=holding.stage,
                    event=event, details_json="{}", created_at=when, created_by=TOMAS.name))
                self.uow.session.delete(holding)
        self.uow.session.flush()
        self.uow.session.add(t.StageHolding(model_id=self.model.id, version_id=version.id,
                                            stage=stage, is_exclusive=exclusive, since=when,
                                            report_id=report.id))
        self.uow.session.add(t.StageEvent(model_id=self.model.id, version_id=version.id,
                                          stage=stage, event="entered", details_json="{}",
                                          report_id=report.id, created_at=when,
                                          created_by=TOMAS.name))
        self.uow.session.flush()
        self.uow.audit.append(TOMAS.name, "stage.promote",
                              f"model/{self.model.name}/version/{number}", {"stage": stage})


def build_brackwater(catalogue: Catalogue, *, markup_model: bool = False) -> None:
    """Both demo models through the story up to (not including) the telemetry recall."""
    grant_role(catalogue, MARA.name, "admin", MARA)
    grant_role(catalogue, INES.name, "publisher", MARA)
    grant_role(catalogue, TOMAS.name, "approver", MARA)
    with UnitOfWork(catalogue) as uow:
        for seed, spec in enumerate(BRACKWATER_DATASETS + NIGHT_FLOW_DATASETS, start=1):
            add_dataset_row(uow, spec, START + timedelta(hours=seed), seed)
        uow.commit()
    models.create_model(catalogue, "main-burst-risk",
                        "Water-main segments likely to burst within 90 days", INES)
    models.create_model(catalogue, "night-flow-leak",
                        "Litres per hour of night flow lost per district meter area", INES)
    if markup_model:
        models.create_model(catalogue, "markup-check",
                            "<script>window.scriptRan = true;</script><b>bold?</b> & more", INES)
    schemas = {1: "segment-v1.avsc", 2: "segment-v2.avsc", 3: "segment-v3.avsc",
               4: "segment-v4.avsc"}
    for number, parent in ((1, None), (2, 1), (3, 2), (4, 2)):
        register(catalogue, "main-burst-risk", BRACKWATER, number, schemas[number],
                 "burst-risk.avsc", "brackwater-training-set", "brackwater-evaluation-set",
                 parent=parent)
    register(catalogue, "night-flow-leak", NIGHT_FLOW, 1, "meter-area-v1.avsc",
             "leak-estimate.avsc", "night-flow-training-set", "night-flow-evaluation-set")
    with UnitOfWork(catalogue) as uow:
        for model, number, dataset, task, seed in (
                ("main-burst-risk", 1, "brackwater-evaluation-set", "binary", 1),
                ("main-burst-risk", 2, "brackwater-evaluation-set", "binary", 2),
                ("main-burst-risk", 3, "brackwater-evaluation-set", "binary", 3),
                ("night-flow-leak", 1, "night-flow-evaluation-set", "regression", 4)):
            version = uow.session.query(t.Version).join(t.Model).filter(
                t.Model.name == model, t.Version.number == number).one()
            data = uow.session.query(t.Dataset).filter_by(name=dataset).one()
            predictions = uow.blobs.put(f"predictions {model} {number}".encode())
            uow.session.add(t.Evaluation(version_id=version.id, dataset_id=data.id,
                                         dataset_content_digest=data.content_digest, task=task,
                                         metrics_json=_metrics(seed, task),
                                         predictions_digest=predictions,
                                         created_at=START + timedelta(days=5 + seed),
                                         created_by=INES.name))
        moves = StageMoves(uow, "main-burst-risk")
        moves.attempt(1, "candidate")
        moves.attempt(1, "live", exclusive=True)
        for number in (2, 3, 4):
            moves.attempt(number, "candidate")
        moves.attempt(2, "shadow")
        moves.attempt(2, "canary", exclusive=True)
        moves.attempt(2, "live", exclusive=True)
        moves.attempt(3, "shadow", passed=False)
        moves.attempt(4, "shadow", passed=False)
        moves.attempt(1, "live", exclusive=True)  # the rollback: v1 holds live again
        night = StageMoves(uow, "night-flow-leak")
        night.attempt(1, "candidate")
        night.attempt(1, "live", exclusive=True)
        uow.commit()
