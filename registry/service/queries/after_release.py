"""The "after release" page of a model: each served version's drift, live quality and shadow
agreement per window, as figures the page turns into charts and tables; and the states alone,
for the model and front pages."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from registry.service.gatekeeping import policy_of
from registry.service.models import find_model
from registry.service.serving_reports import report_in, states_in
from registry.store import tables as t
from registry.store.catalogue import Catalogue
from registry.store.unit_of_work import UnitOfWork


@dataclass(frozen=True)
class ServedVersion:
    """One version's evidence after release; the lists run over the page's windows."""

    version: int
    state: str  # steady, drifting or degrading
    reasons: list[str]
    rows: int
    features: list[str]
    drift: dict[str, list[float | None]]  # PSI per feature per window (None: not served)
    drift_rows: list[dict[str, Any]]      # date, rows, state, psi and level per feature
    qualities: list[dict[str, Any]]       # live quality per window ({}: no outcomes yet)
    evaluation_value: float | None        # the metric on the version's evaluation data
    quality_rows: list[dict[str, Any]]
    agreements: list[dict[str, Any] | None]
    agreement_rows: list[dict[str, Any]]


@dataclass(frozen=True)
class AfterReleaseEvidence:
    name: str
    window: str
    task: str
    retention_days: int
    quality_metric: str
    quality_margin: float
    outcomes: dict[str, int]
    dates: list[str]  # the start of each window, oldest first
    min_agreement: float | None  # the shadow-agreement gate's threshold, when the policy has one
    versions: list[ServedVersion]


def min_agreement(model: t.Model) -> float | None:
    policy = policy_of(model)
    for stage in policy.ladder:
        for spec in policy.gates_for(stage):
            if spec.gate == "shadow-agreement":
                return float(spec.settings["min_agreement"])
    return None


def _served_version(number: int, state: dict[str, Any], windows: list[dict[str, Any]],
                    dates: list[str]) -> ServedVersion:
    entries = [next((e for e in w["versions"] if e["version"] == number), None) for w in windows]
    features = sorted({n for e in entries if e for n in e["input_drift"]})
    qualities = [dict(e["quality"]) if e and "quality" in e else {} for e in entries]
    agreements = [e.get("agreement") if e else None for e in entries]
    return ServedVersion(
        version=number, state=state["state"], reasons=state["reasons"], rows=state["rows"],
        features=features,
        drift={n: [e["input_drift"][n]["psi"] if e and n in e["input_drift"] else None
                   for e in entries] for n in features},
        drift_rows=[{"date": dates[i][:10], "rows": e["rows"], "state": e["state"],
                     "psi": {n: e["input_drift"].get(n, {}).get("psi") for n in features},
                     "levels": {n: e["input_drift"].get(n, {}).get("level") for n in features}}
                    for i, e in enumerate(entries) if e],
        qualities=qualities,
        evaluation_value=next((q.get("evaluation_value") for q in qualities
                               if q.get("evaluation_value") is not None), None),
        quality_rows=[{"date": dates[i][:10], **q} for i, q in enumerate(qualities)
                      if q.get("value") is not None],
        agreements=agreements,
        agreement_rows=[{"date": dates[i][:10], **a} for i, a in enumerate(agreements) if a])


def after_release_evidence(catalogue: Catalogue, name: str) -> AfterReleaseEvidence:
    with UnitOfWork(catalogue, write=False) as uow:
        model = find_model(uow, name)
        report = report_in(uow, model)
        minimum = min_agreement(model)
    windows = report["windows"]
    dates = [w["start"] for w in windows]
    return AfterReleaseEvidence(
        name=name, window=report["window"], task=report["task"],
        retention_days=report["retention_days"], quality_metric=report["quality_metric"],
        quality_margin=report["quality_margin"], outcomes=report["outcomes"], dates=dates,
        min_agreement=minimum,
        versions=[_served_version(int(number), state, windows, dates)
                  for number, state in report["versions"].items()])


def after_release_states(catalogue: Catalogue, name: str) -> dict[str, dict[str, Any]]:
    """Each version's state after release ({} when nothing was served)."""
    with UnitOfWork(catalogue, write=False) as uow:
        return states_in(uow, find_model(uow, name))
