"""One function per kind of gate evidence: read the rows it needs, call the pure package, and
return `registry.gates` evidence records."""

from __future__ import annotations

import json
from datetime import UTC, datetime, timedelta
from functools import lru_cache

from registry import gates
from registry import schema as avro
from registry.store import tables as t
from registry.store.unit_of_work import UnitOfWork

WITNESS_KEYS = {"enum_symbol", "union_branch", "null", "column"}


@lru_cache(maxsize=256)
def _parsed(schema_json: str) -> avro.Schema:
    return avro.parse(json.loads(schema_json))


def _schema_of(version: t.Version, which: str) -> avro.Schema | None:
    text = version.input_schema_json if which == "input" else version.output_schema_json
    return _parsed(text) if text else None


def _present_schema(version: t.Version, which: str) -> avro.Schema:
    """A schema a check relies on: every version has an input schema, and output schemas are
    compared only when both versions have one."""
    schema = _schema_of(version, which)
    assert schema is not None, f"version {version.number} has no {which} schema"
    return schema


def input_schema(version: t.Version) -> avro.Schema | None:
    return _schema_of(version, "input")


def output_schema(version: t.Version) -> avro.Schema | None:
    return _schema_of(version, "output")


def _as_check(resolution: avro.Resolution, reader: t.Version,
              writer: t.Version) -> gates.SchemaCheck:
    return gates.SchemaCheck(reader_version=reader.number, writer_version=writer.number,
                             compatible=resolution.compatible, problems=problems_of(resolution),
                             notes=notes_of(resolution))


def schema_check(reader: t.Version, writer: t.Version, which: str) -> gates.SchemaCheck:
    """`reader`'s schema (input or output) resolving `writer`'s (Avro Schema Resolution)."""
    return _as_check(avro.resolve(_present_schema(reader, which),
                                  _present_schema(writer, which)), reader, writer)


def output_check(incumbent: t.Version, candidate: t.Version) -> gates.SchemaCheck | None:
    """The consumers read with the incumbent's output schema; None when either has none."""
    if incumbent.output_schema_json is None or candidate.output_schema_json is None:
        return None
    return schema_check(incumbent, candidate, "output")


def linked_datasets(uow: UnitOfWork, version: t.Version) -> list[tuple[str, t.Dataset]]:
    return uow.datasets.linked_to_version(version.id)


def dataset_records(uow: UnitOfWork, version: t.Version) -> tuple[gates.DatasetRecord, ...]:
    records = []
    for relation, dataset in linked_datasets(uow, version):
        records.append(gates.DatasetRecord(
            name=dataset.name, role="training" if relation == "trained-on" else "evaluation",
            registered=True, registered_at=dataset.created_at.isoformat(),
            fingerprint=dataset.content_digest))
    return tuple(records)


def recalled_upstream(uow: UnitOfWork, version: t.Version) -> tuple[gates.RecalledDataset, ...]:
    """Every recalled dataset upstream of the version, with the lineage path down to it."""
    from registry.service.recall import recalled_upstream as recalled_sources

    return tuple(gates.RecalledDataset(name=source.dataset, reason=source.reason,
                                       recalled_at=source.recalled_at, via=source.chain)
                 for source in recalled_sources(uow, version))


def _roles_of(uow: UnitOfWork, user: str) -> tuple[str, ...]:
    return tuple(sorted(uow.roles.held_by(user)))


def approvals(uow: UnitOfWork, version: t.Version) -> tuple[gates.Approval, ...]:
    rows = uow.stages.approvals(version.id)
    return tuple(gates.Approval(user=row.approver, roles=_roles_of(uow, row.approver),
                                at=row.created_at.isoformat(), stage=row.stage) for row in rows)


def acknowledgements(uow: UnitOfWork, version: t.Version, stage: str,
                     changes: tuple[gates.FeatureChange, ...]) -> tuple[gates.Acknowledgement, ...]:
    """An approver's approval for this stage acknowledges the needs-review feature changes the
    check report showed them; the approval's note says what they checked."""
    review = [change for change in changes if change.classification == "needs-review"]
    if not review:
        return ()
    rows = uow.stages.approvals(version.id, stage)
    return tuple(gates.Acknowledgement(field=change.field, user=row.approver,
                                       roles=_roles_of(uow, row.approver),
                                       at=row.created_at.isoformat(), note=row.note)
                 for row in rows for change in review)


def _definitions(version: t.Version):
    from registry.features import definitions_from_json

    if not version.features_json:
        return None
    return definitions_from_json(version.features_json,
                                 origin=f"version {version.number} features")


def feature_changes(incumbent: t.Version, candidate: t.Version) -> tuple[gates.FeatureChange, ...]:
    """The semantic diff of feature definitions, incumbent to candidate (registry.features)."""
    from registry.features import diff_features

    old, new = _definitions(incumbent), _definitions(candidate)
    if new is None and old is None:
        return ()
    if new is None or old is None:
        # Without definitions on both sides, no meaning can be compared: a person must look.
        which = f"version {candidate.number}" if new is None else f"version {incumbent.number}"
        return (gates.FeatureChange(field="*", kind="definitions-missing",
                                    classification="needs-review",
                                    message=f"{which} was registered without feature "
                                            "definitions, so no change of meaning can be "
                                            "ruled out"),)
    found = diff_features(old, _schema_of(incumbent, "input"), new, _schema_of(candidate, "input"))
    return tuple(gates.FeatureChange(field=change.path, kind=change.change,
                                     classification=change.severity, message=change.message)
                 for change in found.changes)


def containment(uow: UnitOfWork, version: t.Version) -> tuple[gates.ContainmentEstimate, ...]:
    """For each (training, evaluation) pair of the version: the share of the evaluation set's
    feature-only records (key and label left out) that also occur in the training set, from
    bottom-k sketches (Broder 1997; Cohen and Kaplan 2007)."""
    from registry.datasets import overlap
    from registry.service.datasets import load_fingerprint

    linked = linked_datasets(uow, version)
    training = [d for relation, d in linked if relation == "trained-on"]
    evaluation = [d for relation, d in linked if relation == "evaluated-on"]
    estimates = []
    for train in training:
        train_sketch = load_fingerprint(uow, train).feature_sketch
        for held_out in evaluation:
            found = overlap(train_sketch, load_fingerprint(uow, held_out).feature_sketch)
            estimates.append(gates.ContainmentEstimate(
                training_dataset=train.name, evaluation_dataset=held_out.name,
                containment=found.containment, error_bound=found.containment_error_bound,
                method="exact" if found.is_exact else "bottom-k"))
    return tuple(estimates)


def live_sample(uow: UnitOfWork, model: t.Model) -> gates.SampleProfile | None:
    """The newest live sample registered as taken from this model's feed, with the counts of
    enum symbols, union branches and nulls per column from its profile."""

    sample = uow.datasets.newest_live_sample(model.id)
    return sample_profile(uow, sample) if sample is not None else None


def sample_profile(uow: UnitOfWork, sample: t.Dataset) -> gates.SampleProfile:
    """A registered live sample's profile as the counts the data-aware checks weigh."""
    from registry.service.datasets import load_fingerprint

    profile = load_fingerprint(uow, sample).to_dict().get("profile", {})
    columns = {
        name: gates.ColumnCounts(enum_symbols=dict(column.get("symbols") or {}),
                                 union_branches=dict(column.get("branches") or {}),
                                 nulls=int(column.get("nulls", 0)))
        for name, column in profile.items()}
    return gates.SampleProfile(dataset=sample.name, fingerprint=sample.content_digest,
                               rows=sample.rows, columns=columns)


def _quality_settings(specs) -> dict[str, dict]:
    return {spec.gate: dict(spec.settings) for spec in specs
            if spec.gate in ("no-regression", "slice-guard")}


QualityComparisons = tuple[tuple[gates.PairedComparison, ...],
                           tuple[gates.SliceComparison, ...]]


def quality_comparisons(uow: UnitOfWork, candidate: t.Version, incumbent: t.Version, specs
                        ) -> QualityComparisons:
    """Paired comparisons of candidate and incumbent on every evaluation dataset both were
    evaluated on (same content digest), overall and per slice, with the stored predictions."""
    from registry.evaluation import compare, compare_slices
    from registry.evaluation.record import read_evaluation_record
    from registry.metric_names import HIGHER_IS_BETTER
    from registry.service.evaluations import evaluations_of, stored_predictions

    settings = _quality_settings(specs)
    if not settings:
        return (), ()
    mine = evaluations_of(uow, candidate)
    theirs = {e.dataset_content_digest: e for e, _ in evaluations_of(uow, incumbent)}
    metrics = {s["metric"] for s in settings.values()}
    confidence = settings.get("no-regression", {}).get("confidence", 0.95)
    comparisons: list[gates.PairedComparison] = []
    slices: list[gates.SliceComparison] = []
    for evaluation, _dataset in mine:
        baseline_row = theirs.get(evaluation.dataset_content_digest)
        if baseline_row is None:
            continue
        ours, base = stored_predictions(uow, evaluation), stored_predictions(uow, baseline_row)
        report = compare(ours, base, confidence=confidence, seed=0)
        for metric in sorted(metrics):
            difference = report.differences.get(metric)
            if difference is None:
                continue
            comparisons.append(gates.PairedComparison(
                metric=metric, difference=difference.difference, ci_low=difference.ci_low,
                ci_high=difference.ci_high, p_value=difference.p_value, method=difference.method,
                higher_is_better=HIGHER_IS_BETTER[metric],
                candidate_dataset=evaluation.dataset_content_digest,
                incumbent_dataset=baseline_row.dataset_content_digest, confidence=confidence,
                candidate_value=report.candidate.metrics.get(metric),
                incumbent_value=report.baseline.metrics.get(metric), rows=report.matching.matched))
        if "slice-guard" in settings:
            metric = settings["slice-guard"]["metric"]
            for column in read_evaluation_record(evaluation.metrics_json).slice_columns:
                if column not in base.extra_columns:
                    continue
                per_slice = compare_slices(ours, base, column, confidence=confidence, seed=0)
                for value, result in sorted(per_slice.values.items()):
                    in_slice = result.differences.get(metric)
                    if in_slice is None:
                        continue
                    slices.append(gates.SliceComparison(
                        column=column, value=str(value), metric=metric,
                        difference=in_slice.difference, ci_low=in_slice.ci_low,
                        ci_high=in_slice.ci_high, p_value=in_slice.p_value,
                        higher_is_better=HIGHER_IS_BETTER[metric],
                        adjusted_p_value=in_slice.p_value_holm, confidence=confidence,
                        rows=result.n))
    if not comparisons and mine and theirs:
        # Both were evaluated, never on the same data: say so rather than compare.
        evaluation, _ = mine[0]
        other = next(iter(theirs.values()))
        for metric in sorted(metrics):
            comparisons.append(gates.PairedComparison(
                metric=metric, difference=0.0, ci_low=0.0, ci_high=0.0, p_value=1.0,
                method="not-compared", higher_is_better=HIGHER_IS_BETTER[metric],
                candidate_dataset=evaluation.dataset_content_digest,
                incumbent_dataset=other.dataset_content_digest, confidence=confidence))
    return tuple(comparisons), tuple(slices)


def problems_of(resolution: avro.Resolution) -> tuple[gates.SchemaProblem, ...]:
    return tuple(
        gates.SchemaProblem(path=p.path, rule=p.rule, message=p.message,
                            witness={k: v for k, v in (p.witness or {}).items()
                                     if k in WITNESS_KEYS})
        for p in resolution.problems)


def notes_of(resolution: avro.Resolution) -> tuple[str, ...]:
    return tuple(f"{n.path}: {n.message}" for n in resolution.notes)


def _aware(moment: datetime) -> datetime:
    return moment if moment.tzinfo else moment.replace(tzinfo=UTC)  # SQLite hands back naive


def in_flight(schemas: list[t.FeedSchema], retain_days: int, now: datetime
              ) -> list[t.FeedSchema]:
    """The feed's current writer schema and every older one whose records may still sit in
    queues: a schema stays in flight until its successor has been current for the whole
    retention window (so every schema published within the window is in flight too)."""
    if not schemas:
        return []
    oldest = now - timedelta(days=retain_days)
    kept = [schema for schema, successor in zip(schemas, schemas[1:], strict=False)
            if _aware(successor.published_at) > oldest]
    return kept + [schemas[-1]]


def feed_checks(uow: UnitOfWork, feed: t.Feed, reader: t.Version, now: datetime
                ) -> tuple[gates.FeedSchemaCheck, ...]:
    """`reader`'s input schema against every writer schema of the feed in flight, newest first."""
    schemas = uow.feeds.schemas(feed)
    flying = in_flight(schemas, feed.retain_days, now)
    current = schemas[-1].number if schemas else None
    reader_schema = _present_schema(reader, "input")
    checks = []
    for schema in reversed(flying):
        resolution = avro.resolve(reader_schema, _parsed(schema.schema_json))
        checks.append(gates.FeedSchemaCheck(
            feed=feed.name, feed_version=schema.number,
            published_at=_aware(schema.published_at).isoformat(),
            is_current=schema.number == current, version=reader.number,
            compatible=resolution.compatible, problems=problems_of(resolution),
            notes=notes_of(resolution)))
    return tuple(checks)


def consumer_checks(uow: UnitOfWork, model: t.Model, writer: t.Version
                    ) -> tuple[gates.ConsumerCheck, ...]:
    """Every declared consumer's current reader schema against `writer`'s output schema."""
    checks = []
    for consumer in uow.consumers.of_model(model.id):
        schema = uow.consumers.current_schema(consumer)
        output = _schema_of(writer, "output")
        if output is None:
            problem = gates.SchemaProblem(
                path="/", rule="no-output-schema",
                message=f"version {writer.number} declares no output schema, so no consumer "
                        "can be shown to read its output")
            checks.append(gates.ConsumerCheck(consumer=consumer.name, schema_version=schema.number,
                                              owner=consumer.owner, version=writer.number,
                                              compatible=False, problems=(problem,)))
            continue
        resolution = avro.resolve(_parsed(schema.schema_json), output)
        checks.append(gates.ConsumerCheck(
            consumer=consumer.name, schema_version=schema.number, owner=consumer.owner,
            version=writer.number, compatible=resolution.compatible,
            problems=problems_of(resolution), notes=notes_of(resolution)))
    return tuple(checks)
