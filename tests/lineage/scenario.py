"""The Brackwater catalogue for lineage and web tests: use cases where they exist, rows otherwise.

Datasets and evaluations go through their use cases with the seed files. Stage moves are written
as rows, shaped as the stage use cases write them, so the story's end state (v1 back in live
after v2's rollback, v3 and v4 refused) does not depend on the gates' current settings.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from datetime import UTC, datetime, timedelta
from pathlib import Path


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


@dataclass(frozen=True)
class DatasetSpec:
    name: str
    role: str
    folder: Path
    parents: tuple[str, ...] = ()


BRACKWATER_DATASETS = (
    DatasetSpec("brackwater-asset-register", "source", BRACKWATER),
    DatasetSpec("brackwater-telemetry-extract", "source", BRACKWATER),
    DatasetSpec("brackwater-training-set", "training", BRACKWATER,
                ("brackwater-asset-register", "brackwater-telemetry-extract")),
    DatasetSpec("brackwater-evaluation-set", "evaluation", BRACKWATER,
                ("brackwater-asset-register", "brackwater-telemetry-extract")),
    DatasetSpec("brackwater-live-sample", "live-sample", BRACKWATER),
)
NIGHT_FLOW_DATASETS = (
    DatasetSpec("night-flow-training-set", "training", NIGHT_FLOW),
    DatasetSpec("night-flow-evaluation-set", "evaluation", NIGHT_FLOW),
    DatasetSpec("night-flow-live-sample", "live-sample", NIGHT_FLOW),
)


KEYS = {BRACKWATER: ("segment_id",), NIGHT_FLOW: ("dma_id",)}


def add_dataset(catalogue: Catalogue, spec: DatasetSpec) -> None:
    """Through the dataset use case, with the real fingerprint of the seed file."""
    from registry.datasets import fingerprint_file
    from registry.service.datasets import DatasetRequest, add_dataset as add

    schema = json.loads((spec.folder / "schemas" / f"{spec.name}.avsc").read_text())
    [path] = sorted((spec.folder / "datasets").glob(f"{spec.name}.*"))
    fingerprint = fingerprint_file(str(path), schema_json=schema, keys=KEYS[spec.folder])
    add(catalogue, DatasetRequest(name=spec.name, role=spec.role, fingerprint=fingerprint,
                                  source_uri=f"datasets/{path.name}", derived_from=spec.parents),
        INES)


def add_evaluation(catalogue: Catalogue, model: str, number: int, folder: Path, dataset: str,
                   task: str, slices: tuple[str, ...] = ()) -> None:
    from registry.evaluation import read_predictions
    from registry.service.evaluations import EvaluationRequest, add_evaluation as add

    predictions = read_predictions(folder / "predictions" / f"{model}-v{number}.csv", task)
    add(catalogue, EvaluationRequest(model=model, version=number, dataset=dataset,
                                     predictions=predictions, slice_columns=slices), INES)


def register(catalogue: Catalogue, model: str, folder: Path, number: int,
             parent: int | None = None) -> int:
    """Through the registration use case, from the seed manifest (with a parent version)."""
    import dataclasses

    from registry.cli.local import registration_request

    request = registration_request(model, str(folder / "documents" / f"{model}-v{number}.pfa.json"),
                                   str(folder / "manifests" / f"{model}-v{number}.toml"), None)
    request = dataclasses.replace(
        request, manifest=dataclasses.replace(request.manifest, parent_version=parent))
    return registration.register_version(catalogue, request, INES).version


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
    for spec in BRACKWATER_DATASETS + NIGHT_FLOW_DATASETS:
        add_dataset(catalogue, spec)
    models.create_model(catalogue, "main-burst-risk",
                        "Water-main segments likely to burst within 90 days", MARA)
    models.create_model(catalogue, "night-flow-leak",
                        "Litres per hour of night flow lost per district meter area", MARA)
    if markup_model:
        models.create_model(catalogue, "markup-check",
                            "<script>window.scriptRan = true;</script><b>bold?</b> & more", MARA)
    for number, parent in ((1, None), (2, 1), (3, 2), (4, 2)):
        register(catalogue, "main-burst-risk", BRACKWATER, number, parent=parent)
    register(catalogue, "night-flow-leak", NIGHT_FLOW, 1)
    for number in (1, 2, 3):
        add_evaluation(catalogue, "main-burst-risk", number, BRACKWATER,
                       "brackwater-evaluation-set", "binary", ("district",))
    add_evaluation(catalogue, "night-flow-leak", 1, NIGHT_FLOW, "night-flow-evaluation-set",
                   "regression")
    with UnitOfWork(catalogue) as uow:
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
