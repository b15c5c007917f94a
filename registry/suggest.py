"""Suggestions by closeness for a misspelt name: "did you mean main-burst-risk?"."""

from __future__ import annotations

import difflib
from collections.abc import Iterable

CUTOFF = 0.6  # difflib's own default: below it, names share too little to be a slip of the hand
NEAR_THE_BEST = 0.1  # also suggest names almost as close as the closest, no others


def closest(word: str, choices: Iterable[str], *, limit: int = 3) -> list[str]:
    """The known names nearest to `word`, best first."""
    scored = []
    for choice in sorted(set(choices)):
        matcher = difflib.SequenceMatcher(None, word, choice)
        if matcher.real_quick_ratio() >= CUTOFF and matcher.quick_ratio() >= CUTOFF:
            ratio = matcher.ratio()
            if ratio >= CUTOFF:
                scored.append((ratio, choice))
    if not scored:
        return []
    best = max(ratio for ratio, _ in scored)
    near = sorted((-ratio, choice) for ratio, choice in scored if ratio >= best - NEAR_THE_BEST)
    return [choice for _, choice in near[:limit]]


def did_you_mean(word: str, choices: Iterable[str]) -> str:
    """A clause to add to an error message, or "" when nothing known is close."""
    near = closest(word, choices)
    if not near:
        return ""
    if len(near) == 1:
        return f"; did you mean {near[0]}?"
    return f"; did you mean {', '.join(near[:-1])} or {near[-1]}?"
