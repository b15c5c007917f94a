"""Shadow agreement: how two versions that scored the same rows agree.

Binary: the share of rows on the same side of the decision threshold, the mean absolute score
difference and Spearman's rank correlation (the Pearson correlation of midranks, as scipy's
`spearmanr`); regression: the mean absolute difference and the rank correlation; multiclass:
the share of rows with the same top class.
"""

from __future__ import annotations

import numpy as np

from registry.evaluation.ranking import midranks
from registry.gates.evidence import ShadowAgreement

Agreement = ShadowAgreement  # the gates judge exactly what the report shows


def spearman(a: np.ndarray, b: np.ndarray) -> float | None:
    """Spearman's rank correlation with midranks for ties; None when either side is constant."""
    if len(a) < 2:
        return None
    ra, rb = midranks(a) - (len(a) + 1) / 2, midranks(b) - (len(b) + 1) / 2
    scale = float(np.sqrt(np.dot(ra, ra) * np.dot(rb, rb)))
    return float(np.dot(ra, rb) / scale) if scale > 0 else None


def shared_rows(a_hashes: np.ndarray, b_hashes: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Positions in a and in b of the row ids both scored."""
    _, in_a, in_b = np.intersect1d(a_hashes, b_hashes, assume_unique=False,
                                   return_indices=True)
    return in_a, in_b


def agreement(against: int, task: str, a: np.ndarray, b: np.ndarray,
              threshold: float = 0.5) -> Agreement:
    """a, b: a version's and the incumbent's predictions on the same rows, in the same order (a
    vector, or an (n, classes) matrix for multiclass)."""
    rows = int(a.shape[0])
    if rows == 0:
        return Agreement(against, task, 0)
    if task == "multiclass":
        same = np.argmax(a, axis=1) == np.argmax(b, axis=1)
        return Agreement(against, task, rows, share_agreeing=float(same.mean()),
                         mean_absolute_difference=float(np.abs(a - b).sum(axis=1).mean() / 2))
    difference = float(np.abs(a - b).mean())
    share = float(((a >= threshold) == (b >= threshold)).mean()) if task == "binary" else None
    return Agreement(against, task, rows, share_agreeing=share,
                     mean_absolute_difference=difference, spearman=spearman(a, b))
