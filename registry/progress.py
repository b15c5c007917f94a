"""Progress of long work (a bootstrap's resamples, an export's rows), reported by the core to
whoever listens: a bar on a terminal, or no one. The core only counts; it never sees a terminal.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator
from contextlib import contextmanager
from contextvars import ContextVar

_listener: ContextVar[Callable[[int], None] | None] = ContextVar("progress_listener",
                                                                default=None)


def advance(amount: int = 1) -> None:
    """Count `amount` more units of work done, if anyone is listening."""
    listener = _listener.get()
    if listener is not None:
        listener(amount)


@contextmanager
def listening(listener: Callable[[int], None]) -> Iterator[None]:
    """Send the work counted inside the block to `listener`."""
    token = _listener.set(listener)
    try:
        yield
    finally:
        _listener.reset(token)
