"""Progress bars for long work, drawn with rich on stderr, and only when stderr is a terminal:
never in pipes, CI logs or beside --json on stdout."""

from __future__ import annotations

import sys
from collections.abc import Callable, Iterator
from contextlib import contextmanager

from registry.progress import listening


def stderr_is_terminal() -> bool:
    return sys.stderr.isatty()


@contextmanager
def progress_bar(label: str, total: int | None = None, unit: str = "rows"
                 ) -> Iterator[Callable[[int], None] | None]:
    """A bar while the block runs; yields the function that advances it (None: no bar). The
    core's own counts (registry.progress.advance) reach the same bar."""
    if not stderr_is_terminal():
        yield None
        return
    from rich.console import Console
    from rich.progress import (BarColumn, MofNCompleteColumn, Progress, TextColumn,
                               TimeElapsedColumn)

    counted = MofNCompleteColumn() if total else TextColumn(f"{{task.completed:,.0f}} {unit}")
    with Progress(TextColumn("{task.description}"), BarColumn(), counted, TimeElapsedColumn(),
                  console=Console(file=sys.stderr, force_terminal=True), transient=True) as bar:
        task = bar.add_task(label, total=total)

        def step(amount: int) -> None:
            bar.advance(task, amount)

        with listening(step):
            yield step
