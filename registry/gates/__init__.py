"""Promotion gates: policy loading and pure functions from evidence to a gate report."""

from registry.actors import Actor
from registry.gates.evidence import (
                                     APPROVER,
                                     Acknowledgement,
                                     Approval,
                                     ColumnCounts,
                                     ConsumerCheck,
                                     ContainmentEstimate,
                                     DatasetRecord,
                                     Evidence,
                                     EvidenceError,
                                     FeatureChange,
                                     FeedSchemaCheck,
                                     PairedComparison,
                                     RecalledDataset,
                                     SampleProfile,
                                     SchemaCheck,
                                     SchemaProblem,
                                     ShadowAgreement,
                                     SliceComparison,
                                     Waiver,
)
from registry.gates.policy import (
                                     RETIRED,
                                     GateSpec,
                                     Policy,
                                     PolicyError,
                                     StageRule,
                                     TransitionError,
                                     UnknownStage,
                                     default_policy,
                                     default_policy_text,
                                     load_policy,
)
from registry.gates.report import GateReport, GateResult, render_report
from registry.gates.settings import GATES
from registry.gates.verdict import check_waivers, evaluate
from registry.plain import to_plain

__all__ = [
    "APPROVER", "GATES", "RETIRED", "Acknowledgement", "Actor", "Approval", "ColumnCounts",
    "ConsumerCheck", "FeedSchemaCheck",
    "ContainmentEstimate", "DatasetRecord", "Evidence", "EvidenceError", "FeatureChange",
    "GateReport", "GateResult", "GateSpec", "PairedComparison", "Policy", "PolicyError",
    "RecalledDataset", "SampleProfile", "SchemaCheck", "SchemaProblem", "ShadowAgreement",
    "SliceComparison", "StageRule", "TransitionError", "UnknownStage", "Waiver", "check_waivers",
    "default_policy", "default_policy_text", "evaluate", "holm_adjust",
    "load_policy", "render_report", "to_plain",
]
