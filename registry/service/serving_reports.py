"""Reading the evidence after release: the report and each version's state, from the figures
kept with each window (computed when a batch or outcomes arrive). Light on purpose: `status`
reads states through here without loading numpy, Arrow or the evaluation package, which only
figures missing or made under other settings (a changed policy), or a report window wider than
the stored one, need (serving_evidence.compute_figures)."""

from __future__ import annotations

import json
from typing import Any

from registry.after_release.states import build_report, task_of
from registry.after_release.windows import parse_since, window_seconds
from registry.errors import UserError
from registry.service.model_policy import policy_of, report_settings
from registry.service.models import find_model, find_version
from registry.store import tables as t
from registry.store.catalogue import Catalogue
from registry.store.unit_of_work import UnitOfWork


def report_in(uow: UnitOfWork, model: t.Model, *, version: int | None = None,
              since: str | None = None, window: str | None = None) -> dict[str, Any]:
    policy = policy_of(model)
    stored = policy.serving.window_seconds
    seconds = window_seconds(window) if window else stored
    if seconds % stored:
        raise UserError(f"the report window must be a whole number of the policy's windows "
                        f"({policy.serving.window}), since summaries merge but do not split",
                        place="--window")
    start = parse_since(since) if since else None
    if start is not None:
        start -= start % seconds
    version_ids = [find_version(uow, model, version).id] if version is not None else None
    if seconds == stored:
        figures, task = _kept_figures(uow, model, stored, start, version_ids)
    else:
        from registry.after_release.report import merge_windows
        from registry.after_release.summaries import WindowSummary
        from registry.service.serving_evidence import compute_figures

        stored_windows = uow.serving.windows(model.id, stored, since=start,
                                             version_ids=version_ids)
        summaries = merge_windows([(number, w.window_start, WindowSummary.from_dict(
            json.loads(w.summary_json))) for w, number in stored_windows], seconds)
        task = task_of(summaries.values())
        figures = compute_figures(uow, model, seconds, summaries, since=start)
    settings = report_settings(model, task, seconds)
    incumbents = {s: f.get("incumbent") for (_, s), f in figures.items()}
    report = build_report(model.name, task or "unknown", settings, figures, incumbents,
                          _outcome_counts(uow, model))
    report["window"] = window or policy.serving.window
    report["retention_days"] = policy.serving.retention_days
    if version is not None:
        report["version_filter"] = version
    return report


def _kept_figures(uow: UnitOfWork, model: t.Model, seconds: int, since: int | None,
                  version_ids: list[int] | None) -> tuple[dict, str | None]:
    """The figures kept with each window; any missing or computed under other settings (a
    changed policy) are computed again from the summaries."""
    figures: dict[tuple[int, int], dict[str, Any]] = {}
    stale: set[int] = set()
    tasks = set()
    for start, number, _rows, text in uow.serving.window_figures(
            model.id, seconds, since=since, version_ids=version_ids):
        found = json.loads(text) if text else None
        if found is None:
            stale.add(start)
            continue
        tasks.add(found.get("task"))
        figures[(number, start)] = found
    task = sorted(t for t in tasks if t)[0] if any(tasks) else None
    settings = report_settings(model, task, seconds)
    stale |= {s for (_, s), f in figures.items()
              if (f.get("metric"), f.get("confidence")) != (settings.quality_metric,
                                                            settings.confidence)}
    if stale:
        from registry.after_release.summaries import WindowSummary
        from registry.service.serving_evidence import compute_figures

        found = uow.serving.windows_at(model.id, seconds, sorted(stale))
        wanted = set(version_ids) if version_ids is not None else None
        summaries = {(number, w.window_start): WindowSummary.from_dict(
            json.loads(w.summary_json)) for w, number in found
            if wanted is None or w.version_id in wanted}
        figures.update(compute_figures(uow, model, seconds, summaries))
        task = task or task_of(summaries.values())
    return figures, task


def _outcome_counts(uow: UnitOfWork, model: t.Model) -> dict[str, int]:
    counts = {"batches": 0, "rows": 0, "joined": 0, "unknown_rows": 0}
    for batch in uow.serving.batches(model.id, "outcomes"):
        details = json.loads(batch.details_json or "{}")
        counts["batches"] += 1
        counts["rows"] += batch.rows
        counts["joined"] += int(details.get("joined", 0))
        counts["unknown_rows"] += int(details.get("unknown_rows", 0))
    return counts


def serving_report(catalogue: Catalogue, model: str, *, version: int | None = None,
                   since: str | None = None, window: str | None = None) -> dict[str, Any]:
    """Per window and version: rows, drift, agreement, live quality and the state."""
    with UnitOfWork(catalogue, write=False) as uow:
        line = find_model(uow, model)
        return report_in(uow, line, version=version, since=since, window=window)


def states_in(uow: UnitOfWork, model: t.Model) -> dict[str, dict[str, Any]]:
    """Each version's state after release (steady, drifting, degrading) with its reasons; empty
    when nothing was ever served."""
    if not uow.serving.has_windows(model.id):
        return {}
    return {number: {key: found[key] for key in ("state", "reasons", "newest_window")}
            for number, found in report_in(uow, model)["versions"].items()}
