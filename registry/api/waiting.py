"""`?wait=SECONDS` with `If-None-Match`: hold a read until what it answers changes.

The request sleeps on the process's change watcher (registry/service/change_watch.py), holding
no database connection, and asks again only when the catalogue moved. Past the process's cap
of waiting requests it answers 503 with Retry-After at once.
"""

from __future__ import annotations

import math
import time
from collections.abc import Callable
from typing import TypeVar

from flask import Response, request

from registry.api.context import change_watcher, generation
from registry.api.problems import ApiError, problem_response
from registry.service.change_watch import TooManyWaiting

LONGEST_WAIT = 60.0  # seconds
RETRY_AFTER = "1"    # seconds a refused waiter should pause before asking again
Answer = TypeVar("Answer")
WAIT_PARAMETER = {"name": "wait", "in": "query", "required": False,
                  "description": "With If-None-Match: hold the request up to this many seconds "
                                 "(0 to 60) until the answer changes; 304 if it does not",
                  "schema": {"type": "number", "minimum": 0, "maximum": LONGEST_WAIT}}


def wait_seconds() -> float:
    """The `wait` query parameter in seconds (0 when absent); 400 when out of range."""
    raw = request.args.get("wait")
    if raw is None:
        return 0.0
    try:
        seconds = float(raw)
    except ValueError:
        seconds = math.nan
    if not math.isfinite(seconds) or not 0 <= seconds <= LONGEST_WAIT:
        raise ApiError(f"wait must be a number of seconds from 0 to {LONGEST_WAIT:g}, not "
                       f"{raw!r}", kind="bad-input", status=400, place="wait")
    return seconds


def unchanged(tag: str) -> bool:
    return request.if_none_match.contains_weak(tag)


def answer_when_changed(read: Callable[[int], Answer], tag_of: Callable[[Answer], str],
                        seconds: float) -> Answer | Response:
    """The answer `read(generation)` gives, held up to `seconds` while its tag is the one the
    client sent in If-None-Match; a 503 problem response when too many already wait."""
    current = generation()
    answer = read(current)
    if seconds <= 0 or not unchanged(tag_of(answer)):
        return answer
    watcher = change_watcher()
    try:
        with watcher.admitted():
            deadline = time.monotonic() + seconds
            while unchanged(tag_of(answer)):
                remaining = deadline - time.monotonic()
                if remaining <= 0:
                    break
                newer = watcher.wait_past(current, remaining)
                if newer != current:
                    current = newer
                    answer = read(current)
    except TooManyWaiting:
        return problem_response(
            "too-many-waiting", 503, f"this server process already holds "
            f"{watcher.max_waiting} waiting requests; ask again after {RETRY_AFTER} s",
            place="wait", headers={"Retry-After": RETRY_AFTER})
    return answer
