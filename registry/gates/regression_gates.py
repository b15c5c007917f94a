"""The quality gates: no regression against the incumbent overall, and none in any slice."""

from __future__ import annotations

from collections.abc import Mapping
from statistics import NormalDist
from typing import Any

from registry.gates.evidence import Evidence, PairedComparison
from registry.gates.report import GateResult
from registry.gates.schema_gates import no_incumbent
from registry.multiple_testing import holm_adjust
from registry.plain import to_plain


def _z(confidence: float) -> float:
    return NormalDist().inv_cdf(0.5 + confidence / 2)


def _interval(comparison: PairedComparison, confidence: float) -> tuple[float, float, str | None]:
    """The interval of the difference at `confidence`; rescaled by the normal approximation
    (each side's half-width times the ratio of normal quantiles) when it came at another level."""
    low, high = comparison.ci_low, comparison.ci_high
    if abs(comparison.confidence - confidence) < 1e-12:
        return low, high, None
    ratio = _z(confidence) / _z(comparison.confidence)
    d = comparison.difference
    note = (f"{comparison.metric}: the {comparison.confidence:g} interval [{low:.4g}, {high:.4g}] "
            f"was rescaled to {confidence:g} assuming a normal sampling distribution")
    return d - (d - low) * ratio, d + (high - d) * ratio, note


def no_regression(evidence: Evidence, settings: Mapping[str, Any], stage: str) -> GateResult:
    """On the same evaluation dataset as the incumbent, the candidate's metric is not worse by
    more than `margin` at `confidence`: the interval bound of (candidate - incumbent) on the
    harmful side must not pass -margin (a non-inferiority test)."""
    gate = "no-regression"
    metric, margin, confidence = settings["metric"], settings["margin"], settings["confidence"]
    if not evidence.has_incumbent:
        return no_incumbent(gate, evidence)
    chosen = [c for c in evidence.comparisons if c.metric == metric]
    if not chosen:
        others = sorted({c.metric for c in evidence.comparisons})
        return GateResult(gate, False, False,
                          f"{metric}: no paired comparison with version "
                          f"{evidence.incumbent_version} was supplied",
                          {"metric": metric, "available": others})
    findings, notes, failures, passes = [], [], [], []
    for comparison in chosen:
        entry = to_plain(comparison)
        if comparison.candidate_dataset != comparison.incumbent_dataset:
            entry["verdict"] = "different-datasets"
            findings.append(entry)
            failures.append(
                f"{metric}: the candidate was evaluated on dataset "
                f"{comparison.candidate_dataset} and version {evidence.incumbent_version} on "
                f"{comparison.incumbent_dataset}; metrics on different datasets are never "
                "compared")
            continue
        low, high, rescaled = _interval(comparison, confidence)
        if rescaled:
            notes.append(rescaled)
        # The bound on the harmful side, turned so that negative always means worse.
        harmful = low if comparison.higher_is_better else -high
        entry.update({"judged_confidence": confidence, "judged_ci_low": low,
                      "judged_ci_high": high, "harmful_bound": harmful, "margin": margin})
        shown = (f"{metric}: candidate - incumbent = {comparison.difference:+.4f}, "
                 f"{confidence:.0%} interval [{low:+.4f}, {high:+.4f}] ({comparison.method})")
        if harmful < -margin:
            entry["verdict"] = "may-regress"
            failures.append(f"{shown}; it may be worse than version {evidence.incumbent_version} "
                            f"by more than the margin {margin:g}")
        else:
            entry["verdict"] = "not-worse"
            passes.append(shown)
        findings.append(entry)
    facts = {"metric": metric, "margin": margin, "confidence": confidence,
             "incumbent_version": evidence.incumbent_version, "comparisons": findings}
    if failures:
        return GateResult(gate, False, False, failures[0], facts,
                          tuple(failures[1:] + passes + notes))
    return GateResult(gate, True, False,
                      f"{passes[0]}; not worse than version {evidence.incumbent_version} by more "
                      f"than {margin:g}", facts, tuple(passes[1:] + notes))


def slice_guard(evidence: Evidence, settings: Mapping[str, Any], stage: str) -> GateResult:
    """No slice worse than its margin with significance after Holm-Bonferroni adjustment across
    the slices: a slice fails when its difference is worse than its margin and its adjusted
    p-value is below `alpha` (a material and significant regression)."""
    gate = "slice-guard"
    metric, margin, alpha = settings["metric"], settings["margin"], settings["alpha"]
    margins = settings["slice_margins"]
    if not evidence.has_incumbent:
        return no_incumbent(gate, evidence)
    slices = [s for s in evidence.slices if s.metric == metric]
    if not slices:
        return GateResult(gate, False, False,
                          f"{metric}: no slice comparison with version "
                          f"{evidence.incumbent_version} was supplied", {"metric": metric})
    notes = []
    given = [s.adjusted_p_value for s in slices if s.adjusted_p_value is not None]
    if len(given) == len(slices):
        adjusted = tuple(float(p) for p in given)
    else:
        adjusted = tuple(float(p) for p in holm_adjust([s.p_value for s in slices])
                         if p is not None)
        notes.append(f"p-values Holm-Bonferroni adjusted here across {len(slices)} slices")
    findings, regressions, unproven = [], [], []
    for piece, adjusted_p in zip(slices, adjusted, strict=True):
        allowed = margins.get(piece.value, margin)
        worsening = -piece.difference if piece.higher_is_better else piece.difference
        entry = {**to_plain(piece), "adjusted_p_value": adjusted_p, "margin": allowed}
        label = (f"slice {piece.column}={piece.value}: {metric} worse by {worsening:.4f} "
                 f"(margin {allowed:g}), Holm-adjusted p = {adjusted_p:.3g}")
        if worsening > allowed and adjusted_p < alpha:
            entry["verdict"] = "regresses"
            regressions.append(label)
        elif worsening > allowed:
            entry["verdict"] = "not-significant"
            unproven.append(f"{label}, not significant at {alpha:g}")
        else:
            entry["verdict"] = "within-margin"
        findings.append(entry)
    facts = {"metric": metric, "margin": margin, "alpha": alpha,
             "incumbent_version": evidence.incumbent_version, "slices": findings}
    notes += unproven
    if regressions:
        more = len(regressions) - 1
        tail = f" (and {more} more slice{'s' if more > 1 else ''})" if more else ""
        return GateResult(gate, False, False, regressions[0] + tail, facts,
                          tuple(regressions[1:] + notes))
    return GateResult(gate, True, False,
                      f"{metric}: no slice of {len(slices)} regresses beyond its margin "
                      f"against version {evidence.incumbent_version}", facts, tuple(notes))
