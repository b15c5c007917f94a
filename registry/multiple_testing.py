"""Holm's step-down adjustment of p-values, shared by the slice comparisons and the gates."""

from __future__ import annotations

from collections.abc import Sequence


def holm_adjust(p_values: Sequence[float | None]) -> list[float | None]:
    """Holm-Bonferroni adjusted p-values, in the order given; None entries stay None and do not
    count among the m tests.

    Holm, A Simple Sequentially Rejective Multiple Test Procedure, Scand. J. Statist. 6 (1979):
    the i-th smallest of m p-values is multiplied by (m - i + 1), made non-decreasing in that
    order and capped at 1; rejecting where the adjusted value is below alpha is Holm's procedure.
    """
    present = [index for index, p in enumerate(p_values) if p is not None]
    m = len(present)
    # A stable sort: ties keep their given order, as numpy's stable argsort did.
    order = sorted(present, key=lambda index: p_values[index])  # type: ignore[arg-type,return-value]
    adjusted: list[float | None] = [None] * len(p_values)
    running = 0.0
    for rank, index in enumerate(order):
        running = max(running, min(1.0, (m - rank) * float(p_values[index])))  # type: ignore[arg-type]
        adjusted[index] = running
    return adjusted
