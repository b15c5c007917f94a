"""Any mix of present, missing and failing evidence gives a complete, JSON-ready report."""

import json

from hypothesis import given, settings
from hypothesis import strategies as st

from gates_helpers import (DISTRICTS, TOMAS, comparison, district_slice, live_sample,
                           passing_evidence)
from registry.gates import (GATES, GateReport, SchemaCheck, SchemaProblem, default_policy,
                            evaluate, render_report)

PROBLEMS = st.lists(st.sampled_from([
    SchemaProblem("/fields/diameter_mm/type", "type-mismatch", "string cannot read int"),
    SchemaProblem("/fields/pipe_material/type/symbols", "enum-symbol-missing", "no PVC",
                  witness={"enum_symbol": "PVC"}),
    SchemaProblem("/fields/min_air_temp_c_7d/type", "union-branch-unmatched", "no null",
                  witness={"union_branch": "null"}),
]), max_size=3).map(tuple)


def checks(reader, writer):
    return st.one_of(st.none(), st.builds(lambda ok, problems: SchemaCheck(
        reader, writer, ok, () if ok else problems), st.booleans(), PROBLEMS))


@settings(max_examples=40, deadline=None)
@given(feed=checks(2, 1), rollback=checks(1, 2), output=checks(1, 2),
       has_incumbent=st.booleans(), has_sample=st.booleans(),
       differences=st.lists(st.floats(-0.2, 0.2), max_size=5),
       regression=st.floats(-0.2, 0.2), metric=st.sampled_from(["roc_auc", "log_loss"]))
def test_every_gate_reports_on_any_mix_of_evidence(feed, rollback, output, has_incumbent,
                                                   has_sample, differences, regression, metric):
    evidence = passing_evidence(
        incumbent_version=1 if has_incumbent else None, feed=feed, rollback=rollback,
        output=output, live_sample=live_sample() if has_sample else None,
        comparisons=(comparison(metric, regression, regression - 0.01, regression + 0.01,
                                higher_is_better=metric == "roc_auc"),),
        slices=tuple(district_slice(value, d, p_value=0.01)
                     for value, d in zip(DISTRICTS, differences)))
    report = evaluate(default_policy(), "live", evidence, (), TOMAS)
    assert sorted(result.gate for result in report.results) == sorted(GATES)
    assert GateReport.from_dict(json.loads(json.dumps(report.to_dict()))) == report
    assert render_report(report).count("\n") >= len(GATES)
    assert all(result.summary for result in report.results)
