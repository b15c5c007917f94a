"""The read side of evidence after release: the facts a served batch is checked against, the
references a report compares with, the report itself, the states `status` and the pages show,
and the shadow agreement the gates judge."""

from __future__ import annotations

import json
from collections.abc import Mapping
from typing import TYPE_CHECKING, Any

import numpy as np

from registry import gates
from registry.after_release import compact
from registry.after_release.agreement import agreement, shared_rows
from registry.after_release.report import (
    Reference,
    WindowRowsOf,
    predictions_matrix,
    window_figures,
)
from registry.after_release.row_ids import HashIndex
from registry.after_release.served_batch import CLASS_PREFIX, ServingContext, VersionFacts
from registry.after_release.states import task_of
from registry.after_release.summaries import WindowSummary
from registry.after_release.timeline import Spell, serving_spells
from registry.after_release.windows import MICROS
from registry.datasets.profile import profile_of
from registry.datasets.types import ValueType, record_type
from registry.evaluation.record import EvaluationRecord, read_evaluation_record
from registry.service.datasets import load_fingerprint
from registry.service.evaluations import evaluations_of, stored_predictions
from registry.service.model_policy import policy_of, report_settings
from registry.store import tables as t
from registry.store.unit_of_work import UnitOfWork

if TYPE_CHECKING:
    import pyarrow as pa

SCORE = ValueType("double")


def spells_of(uow: UnitOfWork, model: t.Model, stages: tuple[str, ...]
              ) -> dict[int, tuple[Spell, ...]]:
    return serving_spells(uow.serving.stage_events(model.id), stages)


def _evaluation(uow: UnitOfWork, version: t.Version) -> tuple[t.Evaluation, t.Dataset] | None:
    found = evaluations_of(uow, version)
    return found[0] if found else None


def serving_context(uow: UnitOfWork, model: t.Model) -> ServingContext:
    """What the row checks of a served batch need to know of each version of the model."""
    policy = policy_of(model)
    spells = spells_of(uow, model, policy.serving_stages)
    facts = {}
    for version in uow.serving.versions(model.id):
        evaluated = _evaluation(uow, version)
        task: str | None = None
        classes: tuple[str, ...] = ()
        if evaluated is not None:
            task = evaluated[0].task
            if task == "multiclass":
                classes = stored_predictions(uow, evaluated[0]).classes
        facts[version.number] = VersionFacts(
            number=version.number, input_record=record_type(json.loads(version.input_schema_json)),
            task=task, classes=classes, spells=spells.get(version.number, ()))
    return ServingContext(model=model.name, versions=facts,
                          window_seconds=policy.serving.window_seconds,
                          serving_stages=policy.serving_stages)


# --- references -------------------------------------------------------------------------------

def reference_of(uow: UnitOfWork, version: t.Version) -> Reference:
    """The version's training profile (its features: keys and left-out columns dropped) and its
    evaluation: the profile of its predictions and its metrics."""
    training = uow.serving.training_datasets(version.id)
    profile: dict = {}
    training_name = None
    if training:
        fingerprint = load_fingerprint(uow, training[0])
        training_name = training[0].name
        left_out = set(fingerprint.keys) | set(fingerprint.excluded)
        profile = {n: p for n, p in fingerprint.profile.items() if n not in left_out}
    evaluated = _evaluation(uow, version)
    if evaluated is None:
        return Reference(version.number, training_name, profile)
    evaluation, dataset = evaluated
    record = read_evaluation_record(evaluation.metrics_json)
    predictions = stored_predictions(uow, evaluation)
    return Reference(
        version=version.number, training_dataset=training_name, training=profile,
        evaluation_dataset=dataset.name,
        evaluation_predictions={name: profile_of(_as_array(values), SCORE)
                                for name, values in predictions.score_columns().items()},
        evaluation_metrics=record.metrics,
        threshold=_threshold(record), classes=predictions.classes)


def _threshold(record: EvaluationRecord) -> float:
    """The threshold a binary evaluation decided with; tasks without one agree at 0.5."""
    return record.threshold if record.threshold is not None else 0.5


def _as_array(values: np.ndarray):
    import pyarrow as pa

    return pa.array(np.asarray(values, dtype=np.float64))


# --- compact rows ------------------------------------------------------------------------------

def _joined(contents: list[bytes]) -> pa.Table:
    """One table of several compact parts; callers pass at least one, so there is a table."""
    table = compact.concatenated(contents)
    assert table is not None
    return table


def _columns_of(table) -> list[str]:
    return [c for c in table.column_names if c != "row_hash"]


def prediction_rows(uow: UnitOfWork, model: t.Model, window: int, *, since: int | None = None,
                    until: int | None = None, versions: set[int] | None = None
                    ) -> dict[tuple[int, int], Any]:
    """(version, report window start) -> the concatenated compact predictions."""
    parts: dict[tuple[int, int], list[bytes]] = {}
    for rows, number in uow.serving.rows(model.id, "predictions", since=since, until=until):
        if versions is not None and number not in versions:
            continue
        assert number is not None  # served predictions always name their version
        parts.setdefault((number, rows.window_start - rows.window_start % window),
                         []).append(rows.content)
    return {key: compact.concatenated(contents) for key, contents in parts.items()}


def outcome_labels(uow: UnitOfWork, model: t.Model, window: int, *, since: int | None = None,
                   until: int | None = None) -> dict[int, tuple[np.ndarray, np.ndarray]]:
    """Report window start -> (row hashes, labels) of the outcomes that joined its rows; a
    later outcome for the same row replaces an earlier one."""
    parts: dict[int, list[bytes]] = {}
    for rows, _ in uow.serving.rows(model.id, "outcomes", since=since, until=until):
        parts.setdefault(rows.window_start - rows.window_start % window, []).append(rows.content)
    joined = {}
    for start, contents in parts.items():
        table = _joined(contents)
        hashes = table.column("row_hash").to_numpy()
        labels = table.column("label").to_numpy()
        # keep the last outcome of each row: unique over the reversed order
        _, last = np.unique(hashes[::-1], return_index=True)
        keep = len(hashes) - 1 - last
        joined[start] = (hashes[keep], labels[keep])
    return joined


def _with_labels(table, outcomes: tuple[np.ndarray, np.ndarray] | None) -> WindowRowsOf:
    hashes = table.column("row_hash").to_numpy()
    predictions = predictions_matrix(table, _columns_of(table))
    if outcomes is None:
        return WindowRowsOf(hashes, predictions)
    labels = np.full(len(hashes), np.nan)
    position = HashIndex(outcomes[0]).positions_of(hashes)  # outcome hashes are distinct
    found = position >= 0
    labels[found] = outcomes[1][position[found]]
    return WindowRowsOf(hashes, predictions, labels)


# --- the report ----------------------------------------------------------------------------

def _incumbents(spells: dict[int, tuple[Spell, ...]], starts: set[int],
                window: int) -> dict[int, int | None]:
    """Per window: the version that held the top stage at its middle (or at its start)."""
    found: dict[int, int | None] = {}
    for start in starts:
        found[start] = None
        for moment in ((start + window // 2) * MICROS, start * MICROS,
                       (start + window) * MICROS - 1):
            holders = [n for n, spell_list in spells.items()
                       if any(s.holds(moment) for s in spell_list)]
            if holders:
                found[start] = max(holders)
                break
    return found


def compute_figures(uow: UnitOfWork, model: t.Model, seconds: int,
                    summaries: dict[tuple[int, int], WindowSummary], *,
                    since: int | None = None) -> dict[tuple[int, int], dict[str, Any]]:
    """The figures of each (version, window start) from the summaries, the compact rows and the
    outcomes: the slow way, used when rows arrive and for windows longer than the policy's."""
    if not summaries:
        return {}
    policy = policy_of(model)
    task = task_of(summaries.values())
    settings = report_settings(model, task, seconds)
    numbers = {number for number, _ in summaries}
    by_number = {v.number: v for v in uow.serving.versions(model.id)}
    references = {n: reference_of(uow, by_number[n]) for n in numbers}
    starts = {start for _, start in summaries}
    top = spells_of(uow, model, (policy.top_stage,))
    incumbents = _incumbents(top, starts, seconds)
    low = min(starts) if since is None else since
    outcomes = outcome_labels(uow, model, seconds, since=low, until=max(starts) + seconds)
    # rows are read only where they tell something: outcomes to join, or a shadow beside the
    # incumbent to compare with
    versions_at: dict[int, set[int]] = {}
    for number, start in summaries:
        versions_at.setdefault(start, set()).add(number)
    needed = {start for start, held in versions_at.items()
              if start in outcomes or (incumbents.get(start) is not None
                                       and held - {incumbents[start]})}
    rows = {}
    if needed:
        wanted = numbers | {n for n in incumbents.values() if n is not None}
        predictions = prediction_rows(uow, model, seconds, since=min(needed), versions=wanted,
                                      until=max(needed) + seconds)
        rows = {key: _with_labels(table, outcomes.get(key[1]))
                for key, table in predictions.items() if key[1] in needed}
    figures = {}
    for (number, start), summary in summaries.items():
        incumbent = incumbents.get(start)
        found = window_figures(number, summary, references[number], task or "unknown",
                               settings, rows.get((number, start)),
                               rows.get((incumbent, start)) if incumbent else None, incumbent)
        found["incumbent"] = incumbent
        found["task"] = task
        found["metric"] = settings.quality_metric
        found["confidence"] = settings.confidence
        figures[(number, start)] = found
    return figures


def refresh_figures(uow: UnitOfWork, model: t.Model, starts: set[int],
                    known: Mapping[tuple[int, int, int], WindowSummary] | None = None) -> None:
    """Recompute and keep the figures of every version's window at these starts (after a batch
    or an outcome touched them), so that reports only read them. `known` holds summaries
    just stored, by (version, window start, window seconds): they need not be parsed again."""
    if not starts:
        return
    seconds = policy_of(model).serving.window_seconds
    found = uow.serving.windows_at(model.id, seconds, sorted(starts))
    known = known or {}
    summaries = {(number, w.window_start): known.get((number, w.window_start, seconds)) or
                 WindowSummary.from_dict(json.loads(w.summary_json)) for w, number in found}
    figures = compute_figures(uow, model, seconds, summaries)
    for window, number in found:
        window.figures_json = json.dumps(figures[(number, window.window_start)],
                                         allow_nan=False)


# --- evidence for the gates ----------------------------------------------------------------------

def shadow_agreement(uow: UnitOfWork, model: t.Model, candidate: t.Version,
                     incumbent: t.Version) -> gates.ShadowAgreement | None:
    """The candidate's agreement with the incumbent over every retained row both scored."""
    mine, theirs, task = [], [], None
    for rows, number in uow.serving.rows(model.id, "predictions"):
        if number == candidate.number:
            mine.append(rows.content)
        elif number == incumbent.number:
            theirs.append(rows.content)
    if not mine or not theirs:
        return None
    a, b = _joined(mine), _joined(theirs)
    columns = _columns_of(a)
    task = ("binary" if columns == ["score"] else "regression" if columns == ["prediction"]
            else "multiclass")
    in_a, in_b = shared_rows(a.column("row_hash").to_numpy(), b.column("row_hash").to_numpy())
    evaluated = _evaluation(uow, candidate)
    threshold = _threshold(read_evaluation_record(evaluated[0].metrics_json)) \
        if evaluated else 0.5
    return agreement(incumbent.number, task, predictions_matrix(a, columns)[in_a],
                     predictions_matrix(b, _columns_of(b))[in_b], threshold)


def classes_of_columns(columns: list[str]) -> tuple[str, ...]:
    return tuple(c[len(CLASS_PREFIX):] for c in columns if c.startswith(CLASS_PREFIX))
