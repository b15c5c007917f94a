"""Properties on small random inputs (hypothesis, bounded): ties, Holm, the stored form."""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st
from sklearn.metrics import average_precision_score, roc_auc_score

from registry.evaluation import holm_adjust
from registry.evaluation.metrics import average_precision, roc_auc

small_scores = st.lists(st.sampled_from([0.0, 0.1, 0.25, 0.5, 0.9, 1.0]), min_size=2,
                        max_size=30)


@settings(max_examples=60, deadline=None)
@given(scores=small_scores, data=st.data())
def test_auc_and_average_precision_equal_scikit_learn_under_any_ties(scores, data):
    labels = np.array(data.draw(st.lists(st.integers(0, 1), min_size=len(scores),
                                         max_size=len(scores))))
    if labels.min() == labels.max():
        labels[0] = 1 - labels[0]
    values = np.array(scores)
    # scikit-learn roc_auc_score and average_precision_score are the references.
    assert np.isclose(roc_auc(labels, values), roc_auc_score(labels, values), rtol=1e-12)
    assert np.isclose(average_precision(labels, values),
                      average_precision_score(labels, values), rtol=1e-12)


@settings(max_examples=60, deadline=None)
@given(st.lists(st.floats(0.0, 1.0), min_size=1, max_size=12))
def test_holm_adjusted_p_values_are_at_least_raw_and_keep_their_order(p_values):
    adjusted = holm_adjust(p_values)
    assert all(a >= p - 1e-15 and a <= 1.0 for a, p in zip(adjusted, p_values))
    order = np.argsort(p_values, kind="stable")
    assert all(adjusted[order[k]] <= adjusted[order[k + 1]] + 1e-15
               for k in range(len(order) - 1))
    # Holm (1979): the smallest p-value is multiplied by the number of tests.
    assert np.isclose(min(adjusted), min(1.0, len(p_values) * min(p_values)))
