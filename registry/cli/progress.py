"""Progress bars for long work, drawn with rich on stderr, and only when stderr is a terminal:
never in pipes, CI logs or beside --json on stdout."""

from __future__ import annotations

import sys
import time
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from typing import TYPE_CHECKING, Any

from registry.progress import listening

if TYPE_CHECKING:
    from rich.progress import TaskID


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
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeElapsedColumn

    counted = MofNCompleteColumn() if total else TextColumn(f"{{task.completed:,.0f}} {unit}")
    with Progress(TextColumn("{task.description}"), BarColumn(), counted, TimeElapsedColumn(),
                  console=Console(file=sys.stderr, force_terminal=True), transient=True) as bar:
        task = bar.add_task(label, total=total)

        def step(amount: int) -> None:
            bar.advance(task, amount)

        with listening(step):
            yield step


# The dataset work's own bar: files and rows side by side, rows per second and time left.

class DatasetProgress:
    """Receives (rows, bytes, files) as the work goes on; call `start(plan)` once planned."""

    def __init__(self, label: str) -> None:
        from rich.console import Console
        from rich.progress import BarColumn, Progress, TextColumn, TimeRemainingColumn

        self.label = label
        self.bar = Progress(TextColumn("{task.description}"), BarColumn(),
                            TextColumn("{task.fields[files]}"), TextColumn("{task.fields[rows]}"),
                            TextColumn("{task.fields[speed]}"), TimeRemainingColumn(),
                            console=Console(stderr=True), transient=False,
                            auto_refresh=False)  # no drawing thread: workers may then fork
        self.drawn = 0.0
        self.task: TaskID | None = None
        self.by_rows = False
        self.total_files = self.files = self.rows = 0
        self.started = time.monotonic()

    def start(self, plan) -> None:
        self.by_rows = plan.total_rows is not None
        self.total_files = len(plan.files)
        total = plan.total_rows if self.by_rows else plan.total_bytes
        self.bar.start()
        self.task = self.bar.add_task(self.label, total=max(total, 1), **self._fields())

    def __call__(self, rows: int, bytes_done: int, files: int) -> None:
        if self.task is None:
            return
        self.rows += rows
        self.files += files
        self.bar.update(self.task, advance=rows if self.by_rows else bytes_done,
                        **self._fields())
        now = time.monotonic()
        if now - self.drawn >= 0.1 or files:
            self.bar.refresh()
            self.drawn = now

    def _fields(self) -> dict[str, Any]:  # rich takes a task's fields as **Any
        elapsed = max(time.monotonic() - self.started, 1e-6)
        return {"files": f"{self.files}/{self.total_files} files",
                "rows": f"{self.rows:,} rows", "speed": f"{self.rows / elapsed:,.0f} rows/s"}

    def stop(self) -> None:
        if self.task is not None:
            self.bar.refresh()
            self.bar.stop()


@contextmanager
def dataset_progress(label: str) -> Iterator[DatasetProgress | None]:
    """A progress bar when stderr is a terminal, else None (nothing is drawn in pipes or CI)."""
    if not stderr_is_terminal():
        yield None
        return
    progress = DatasetProgress(label)
    try:
        yield progress
    finally:
        progress.stop()
