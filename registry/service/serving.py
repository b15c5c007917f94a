"""Use cases after release: recording served batches and outcomes (one transaction each).

A batch is read and checked before the transaction starts (all but the search for a row id sent
twice, which runs while the rows are written, before the commit), so a bad row refuses it with
nothing stored; the same batch sent again (same digest) changes nothing. What is kept grows with
time, not with traffic: one mergeable summary per model, version and window, and the compact
rows of each window until the policy's retention drops them.
"""

from __future__ import annotations

import contextvars
import hashlib
import json
import threading
from collections import OrderedDict
from collections.abc import Callable, Iterator, Mapping, Sequence
from concurrent.futures import CancelledError, Future, ThreadPoolExecutor
from dataclasses import dataclass
from typing import Any

import numpy as np

from registry.after_release import compact
from registry.after_release.outcomes import OutcomeBatch, check_labels, read_outcomes
from registry.after_release.row_ids import HashIndex
from registry.after_release.served_batch import CheckedBatch, read_served_batch
from registry.after_release.summaries import WindowSummary, merge_summaries
from registry.after_release.windows import iso
from registry.collector_pause import collector_paused
from registry.errors import UserError
from registry.node_ids import model_id
from registry.service import gatekeeping
from registry.service.actors import Actor
from registry.service.authorisation import authorise
from registry.service.models import find_model
from registry.service.serving_evidence import classes_of_columns, refresh_figures, serving_context
from registry.store import tables as t
from registry.store.catalogue import Catalogue
from registry.store.unit_of_work import UnitOfWork, utc_now
from registry.thread_pools import shared_pool

DAY = 86400


def file_digest(path: str) -> str:
    """SHA-256 of the batch as sent: the identity that makes sending it again harmless."""
    try:
        with open(path, "rb") as handle:  # read into one reused buffer, hashed as it comes
            return hashlib.file_digest(handle, "sha256").hexdigest()
    except OSError as error:
        raise UserError(f"cannot read the batch: {error.strerror or error}", place=path) from None


def _helpers() -> ThreadPoolExecutor:
    """Threads for the batch's digest while its rows are checked, then for merging its
    summaries while its compact rows are written (hashlib and SQLite let go of the GIL)."""
    return shared_pool("serving-helper", 2)


def record_served(catalogue: Catalogue, model: str, path: str, actor: Actor, *,
                  format: str | None = None, schema_json: Mapping[str, Any] | None = None,
                  progress: Callable[[int], None] | None = None) -> dict[str, Any]:
    """Check and keep one served batch; the answer says what it added, per version and window."""
    with collector_paused():
        return _keep(catalogue, model, actor, _read(catalogue, model, path, actor, format=format,
                                                    schema_json=schema_json, progress=progress))


def record_served_batches(catalogue: Catalogue, model: str, paths: Sequence[str], actor: Actor,
                          *, format: str | None = None,
                          schema_json: Mapping[str, Any] | None = None,
                          progress: Callable[[int], None] | None = None
                          ) -> Iterator[dict[str, Any]]:
    """`record_served` of each file in turn, each its own batch and transaction; yields each
    answer once its batch is kept. The next file is read and checked on a thread while this one
    is written, so that writing and committing a batch (one core, and a wait for the disk)
    overlaps with reading the next (every core).

    A refused file raises its error and ends the run: the files before it stay recorded (sending
    them again changes nothing) and nothing of it or of those after it is kept."""
    if not paths:
        return
    reader = shared_pool("served-next-file")
    with collector_paused():
        def read(path: str) -> Future[_ReadBatch]:  # in the caller's context (its listeners)
            return reader.submit(contextvars.copy_context().run, _read, catalogue, model, path,
                                 actor, format=format, schema_json=schema_json,
                                 progress=progress)

        upcoming = read(paths[0])
        try:
            for following in [*paths[1:], None]:
                current = upcoming.result()
                if following is not None:
                    upcoming = read(following)
                yield _keep(catalogue, model, actor, current)
        finally:
            if not upcoming.done():
                upcoming.cancel()
            try:  # a read under way when a batch is refused is waited for, and dropped
                upcoming.exception()
            except CancelledError:
                pass


@dataclass(frozen=True)
class _ReadBatch:
    """A served batch read and checked, not yet kept: its digest, window length and rows."""

    digest: str
    window_seconds: int
    checked: CheckedBatch


def _read(catalogue: Catalogue, model: str, path: str, actor: Actor, *,
          format: str | None, schema_json: Mapping[str, Any] | None,
          progress: Callable[[int], None] | None) -> _ReadBatch:
    with UnitOfWork(catalogue, write=False) as uow:
        authorise(uow, actor, "serving.record")  # before reading a row of the batch
        line = find_model(uow, model)
        context = serving_context(uow, line)
    # The digest is taken on a thread of its own while the rows are read and checked; a batch
    # sent again is found by it in the writing transaction below and changes nothing.
    digesting = _helpers().submit(file_digest, path)
    try:
        # The search for a row id sent twice needs every row: it runs on a thread while the
        # rows are written, and a refusal ends the transaction without a commit.
        checked = read_served_batch(path, context, format=format, schema_json=schema_json,
                                    progress=progress, repeats_later=True)
    finally:
        digest = digesting.result()
    return _ReadBatch(digest, context.window_seconds, checked)


def _keep(catalogue: Catalogue, model: str, actor: Actor, read: _ReadBatch) -> dict[str, Any]:
    digest, checked = read.digest, read.checked
    groups = sorted(checked.groups.items())
    # The compact rows of each window were encoded part by part while the batch was read.
    contents = [checked.contents[key] for key, _ in groups]
    with UnitOfWork(catalogue) as uow:
        authorise(uow, actor, "serving.record")
        line = find_model(uow, model)
        existing = uow.serving.batch(line.id, "served", digest)
        if existing is not None:  # sent before, or a concurrent sender got there first
            return _already(line.name, digest, existing)
        versions = {v.number: v for v in uow.serving.versions(line.id)}
        windows = _describe(checked)
        batch = uow.serving.add_batch(t.ServedBatch(
            model_id=line.id, kind="served", digest=digest, rows=checked.rows,
            details_json=json.dumps({"task": checked.task, "windows": windows}),
            created_at=utc_now(), created_by=actor.name))
        seconds = read.window_seconds
        held = {key: uow.serving.window(line.id, versions[key[0]].id, key[1], seconds)
                for key, _ in groups}
        # The summaries merge with the windows' stored ones on a thread while the compact rows
        # are written (SQLite lets go of the GIL while it copies megabytes into its pages).
        merging = [_helpers().submit(_merged_window, _summary_json(held[key]), rows.summary)
                   for key, rows in groups]
        for ((number, start), rows), content in zip(groups, contents, strict=True):
            uow.serving.add_rows(t.ServedRows(
                model_id=line.id, batch_id=batch.id, kind="predictions",
                version_id=versions[number].id, window_start=start, rows=rows.summary.rows,
                content=content.result()))
        stored = {}
        for ((number, start), _rows), merged in zip(groups, merging, strict=True):
            summary, text = merged.result()
            _keep_window(uow, line, versions[number], start, seconds, held[(number, start)],
                         summary, text)
            stored[(number, start, seconds)] = summary
        refresh_figures(uow, line, {start for _, start in checked.groups}, stored)
        dropped = _apply_retention(uow, line)
        checked.refuse_repeated_ids()
        uow.audit.append(actor.name, "serving.record", model_id(line.name),
                         {"digest": digest, "rows": checked.rows, "task": checked.task,
                          "windows": windows, "dropped_row_sets": dropped})
        uow.commit()
        return {"model": line.name, "digest": digest, "recorded": True, "rows": checked.rows,
                "task": checked.task, "windows": windows, "dropped_row_sets": dropped}


def _already(model: str, digest: str, batch: t.ServedBatch) -> dict[str, Any]:
    details = json.loads(batch.details_json or "{}")
    return {"model": model, "digest": digest, "recorded": False, "rows": batch.rows,
            **{k: v for k, v in details.items() if k in ("task", "windows", "joined",
                                                            "unknown_rows")}}


def _describe(checked: CheckedBatch) -> list[dict[str, Any]]:
    return [{"version": number, "window": iso(start), "rows": rows.summary.rows}
            for (number, start), rows in sorted(checked.groups.items())]


def _merged_window(stored_json: str | None, summary: WindowSummary) -> tuple[WindowSummary, str]:
    """A window's summary once a batch's is added to the one stored (None: a new window): its
    JSON, and the summary as read back from it (what a later reading of the JSON gives)."""
    merged = (summary if stored_json is None else
              merge_summaries(_read_summaries.read(stored_json), summary))
    document = merged.to_dict()
    text = json.dumps(document, allow_nan=False)
    kept = WindowSummary.from_dict(document)
    _read_summaries.remember(text, kept)
    return kept, text


class _SummaryTexts:
    """The summaries of the last few window JSON texts this process wrote or read, by their
    text: consecutive batches mostly meet in one window, and parsing its JSON again costs more
    than the merge (tens of thousands of small lists). The text read back must equal the one
    remembered, character for character, for its summary to be taken."""

    def __init__(self, size: int) -> None:
        self._size = size
        self._known: OrderedDict[str, WindowSummary] = OrderedDict()
        self._lock = threading.Lock()

    def read(self, text: str) -> WindowSummary:
        with self._lock:
            known = self._known.get(text)
        if known is None:
            known = WindowSummary.from_dict(json.loads(text))
            self.remember(text, known)
        return known

    def remember(self, text: str, summary: WindowSummary) -> None:
        with self._lock:
            self._known[text] = summary
            self._known.move_to_end(text)
            while len(self._known) > self._size:
                self._known.popitem(last=False)


_read_summaries = _SummaryTexts(8)


def _summary_json(window: t.ServedWindow | None) -> str | None:
    return window.summary_json if window is not None else None


def _keep_window(uow: UnitOfWork, model: t.Model, version: t.Version, start: int, seconds: int,
                 window: t.ServedWindow | None, summary: WindowSummary, text: str) -> None:
    if window is None:
        uow.serving.add_window(t.ServedWindow(
            model_id=model.id, version_id=version.id, window_start=start,
            window_seconds=seconds, rows=summary.rows, summary_json=text,
            updated_at=utc_now()))
        return
    window.rows = summary.rows
    window.summary_json = text
    window.updated_at = utc_now()


def _apply_retention(uow: UnitOfWork, model: t.Model) -> int:
    """Drop compact rows older than the retention, counted back from the newest window (so an
    old batch replayed later does not wipe what is current)."""
    newest = uow.serving.newest_window(model.id)
    if newest is None:
        return 0
    days = gatekeeping.policy_of(model).serving.retention_days
    return uow.serving.drop_rows_before(model.id, newest - days * DAY)


# --- outcomes --------------------------------------------------------------------------------

def record_outcomes(catalogue: Catalogue, model: str, path: str, actor: Actor, *,
                    format: str | None = None) -> dict[str, Any]:
    """Join outcomes to the rows they belong to, whenever they arrive; unknown rows are counted."""
    digest = file_digest(path)
    with UnitOfWork(catalogue, write=False) as uow:
        authorise(uow, actor, "serving.outcomes")  # before reading a row of the batch
        find_model(uow, model)
    outcomes = read_outcomes(path, format)
    with UnitOfWork(catalogue) as uow:
        authorise(uow, actor, "serving.outcomes")
        line = find_model(uow, model)
        existing = uow.serving.batch(line.id, "outcomes", digest)
        if existing is not None:
            return _already(line.name, digest, existing)
        windows, task, classes = _served_windows_of(uow, line, outcomes)
        labels = (check_labels(outcomes.label_values, outcomes.label_codes, task, classes)
                  if task else None)
        joined = windows >= 0
        unknown = int((~joined).sum())
        if labels is None and joined.any():
            raise UserError("the rows these outcomes join have no task", place="label")
        batch = uow.serving.add_batch(t.ServedBatch(
            model_id=line.id, kind="outcomes", digest=digest, rows=len(outcomes.hashes),
            details_json=json.dumps({"joined": int(joined.sum()), "unknown_rows": unknown}),
            created_at=utc_now(), created_by=actor.name))
        per_window = []
        for start in np.unique(windows[joined]).tolist():
            assert labels is not None  # rows joined, so they have a task (refused above if not)
            mine = windows == start
            columns = {"row_hash": outcomes.hashes[mine],
                       "label": labels[mine].astype(np.float64)}
            if outcomes.observed_at is not None:
                columns["observed_at"] = outcomes.observed_at[mine]
            uow.serving.add_rows(t.ServedRows(
                model_id=line.id, batch_id=batch.id, kind="outcomes", version_id=None,
                window_start=int(start), rows=int(mine.sum()), content=compact.encode(columns)))
            per_window.append({"window": iso(int(start)), "rows": int(mine.sum())})
        refresh_figures(uow, line, {int(s) for s in np.unique(windows[joined]).tolist()})
        uow.audit.append(actor.name, "serving.outcomes", model_id(line.name),
                         {"digest": digest, "rows": len(outcomes.hashes),
                          "joined": int(joined.sum()), "unknown_rows": unknown,
                          "windows": per_window})
        uow.commit()
        return {"model": line.name, "digest": digest, "recorded": True,
                "rows": len(outcomes.hashes), "joined": int(joined.sum()),
                "unknown_rows": unknown, "windows": per_window}


def _served_windows_of(uow: UnitOfWork, model: t.Model, outcomes: OutcomeBatch
                       ) -> tuple[np.ndarray, str | None, tuple[str, ...]]:
    """For each outcome, the window its row was first served in (-1 when never served within
    the retention), the task of those rows and their classes."""
    windows = np.full(len(outcomes.hashes), -1, dtype=np.int64)
    task: str | None = None
    classes: tuple[str, ...] = ()
    index = HashIndex(outcomes.hashes)  # the batch's ids are distinct (read_outcomes)
    waiting = len(outcomes.hashes)
    # oldest window first, one row set at a time, until every outcome has found its row
    row_sets = uow.serving.contents(model.id, "predictions")
    for start, content in row_sets:
        if waiting == 0:
            row_sets.close()
            break
        table = compact.decode(content)
        hit = index.found_in(table.column("row_hash").to_numpy()) & (windows < 0)
        if hit.any():
            columns = [c for c in table.column_names if c != "row_hash"]
            task = ("binary" if columns == ["score"] else "regression"
                    if columns == ["prediction"] else "multiclass")
            classes = classes_of_columns(columns)
            windows[hit] = start
            waiting -= int(hit.sum())
    return windows, task, classes
