"""Hand-made evidence for the gate tests: v2 of main-burst-risk against v1 live, all in order,
plus a one-gate policy so each gate can be judged alone."""

from __future__ import annotations

import dataclasses
import json
from typing import Any

from registry.gates import (Acknowledgement, Actor, Approval, ColumnCounts, ContainmentEstimate,
                            DatasetRecord, Evidence, GateResult, PairedComparison, SampleProfile,
                            SchemaCheck, ShadowAgreement, SliceComparison, Waiver, evaluate,
                            load_policy)

NOW = "2026-12-01T09:00:00Z"
AUTHOR = "ines.okafor"
INES = Actor("ines.okafor", frozenset({"publisher"}))
TOMAS = Actor("tomas.lindqvist", frozenset({"approver"}))
PRIYA = Actor("priya.raman", frozenset({"approver"}))
MARA = Actor("mara.kowalczyk", frozenset({"admin"}))
EVALUATION_DIGEST = "sha256:evaluation-set-digest"
DISTRICTS = ("NORTHGATE", "RIVERSIDE", "OLD_TOWN", "HILLCREST", "SALTMARSH")


def compatible(reader: int, writer: int) -> SchemaCheck:
    return SchemaCheck(reader_version=reader, writer_version=writer, compatible=True)


def live_sample(rows: int = 5000, **columns: ColumnCounts) -> SampleProfile:
    profiled = {
        "pipe_material": ColumnCounts(enum_symbols={"CAST_IRON": 2100, "DUCTILE_IRON": 1300,
                                                    "PVC": 900, "HDPE": 700,
                                                    "ASBESTOS_CEMENT": 0}),
        "soil_corrosivity": ColumnCounts(enum_symbols={"LOW": 2500, "MODERATE": 1800,
                                                       "HIGH": 700}),
        "min_air_temp_c_7d": ColumnCounts(nulls=0),
    }
    profiled.update(columns)
    return SampleProfile(dataset="brackwater-live-sample", fingerprint="sha256:live-sample",
                         rows=rows, columns=profiled)


def comparison(metric: str = "roc_auc", difference: float = 0.021, ci_low: float = 0.008,
               ci_high: float = 0.034, **changes: Any) -> PairedComparison:
    fields = dict(metric=metric, difference=difference, ci_low=ci_low, ci_high=ci_high,
                  p_value=0.002, method="delong", higher_is_better=True,
                  candidate_dataset=EVALUATION_DIGEST, incumbent_dataset=EVALUATION_DIGEST,
                  confidence=0.95, candidate_value=0.781, incumbent_value=0.760, rows=2000)
    fields.update(changes)
    return PairedComparison(**fields)


def district_slice(value: str, difference: float = 0.01, p_value: float = 0.3,
                   **changes: Any) -> SliceComparison:
    fields = dict(column="district", value=value, metric="roc_auc", difference=difference,
                  ci_low=difference - 0.03, ci_high=difference + 0.03, p_value=p_value,
                  higher_is_better=True, rows=400)
    fields.update(changes)
    return SliceComparison(**fields)


def passing_evidence(**changes: Any) -> Evidence:
    """v2 (adds repairs_5y with a default) against v1 live: every gate passes."""
    fields = dict(
        model="main-burst-risk", version=2, author=AUTHOR, evaluated_at=NOW,
        code_revision="7a41d09", incumbent_version=1,
        feed=compatible(2, 1), past_feeds=(compatible(2, 1),), rollback=compatible(1, 2),
        output=compatible(1, 2), live_sample=live_sample(),
        feature_changes=(),
        comparisons=(comparison(),),
        slices=tuple(district_slice(value) for value in DISTRICTS),
        containment=(ContainmentEstimate("brackwater-training-set", "brackwater-evaluation-set",
                                         containment=0.0, error_bound=0.004),),
        datasets=(DatasetRecord("brackwater-training-set", "training", True,
                                registered_at="2026-11-20T08:00:00Z", fingerprint="sha256:t"),
                  DatasetRecord("brackwater-evaluation-set", "evaluation", True,
                                registered_at="2026-11-20T08:05:00Z",
                                fingerprint=EVALUATION_DIGEST)),
        approvals=(Approval("tomas.lindqvist", ("approver",), at="2026-12-01T08:30:00Z"),),
        agreement=ShadowAgreement(against=1, task="binary", rows=5600, share_agreeing=0.96,
                                  mean_absolute_difference=0.031, spearman=0.94),
    )
    fields.update(changes)
    return Evidence(**fields)


def _toml_value(value: Any) -> str:
    return json.dumps(value)  # strings, numbers and booleans read the same in TOML


def one_gate_policy(gate: str, **settings: Any):
    """A two-rung ladder whose top stage `live` is guarded by `gate` alone."""
    lines = ['ladder = ["candidate", "live"]', f"[stages.live.gates.{gate}]"]
    tables = {key: value for key, value in settings.items() if isinstance(value, dict)}
    lines += [f"{key} = {_toml_value(value)}" for key, value in settings.items()
              if key not in tables]
    for key, table in tables.items():
        lines.append(f"[stages.live.gates.{gate}.{key}]")
        lines += [f"{name} = {_toml_value(value)}" for name, value in table.items()]
    return load_policy("\n".join(lines), source=f"test policy for {gate}")


def judge(gate: str, evidence: Evidence, *, waivers: tuple[Waiver, ...] = (),
          actor: Actor = TOMAS, **settings: Any) -> GateResult:
    """The one result of `gate` alone on `evidence`."""
    report = evaluate(one_gate_policy(gate, **settings), "live", evidence, waivers, actor)
    (result,) = report.results
    assert report.passed == result.cleared
    return result


def waive(gate: str, reason: str = "reviewed by hand", actor: Actor = TOMAS) -> tuple[Waiver]:
    return (Waiver(gate=gate, approver=actor.name, reason=reason),)


def without_incumbent(evidence: Evidence) -> Evidence:
    return dataclasses.replace(evidence, incumbent_version=None, feed=None, past_feeds=(),
                               rollback=None, output=None, comparisons=(), slices=(),
                               feature_changes=())


def acknowledgement(field: str, actor: Actor = PRIYA) -> Acknowledgement:
    return Acknowledgement(field=field, user=actor.name, roles=tuple(sorted(actor.roles)),
                           at="2026-12-01T08:00:00Z", note="checked against the data dictionary")
