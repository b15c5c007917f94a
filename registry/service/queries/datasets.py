"""The dataset page: what it is, where it came from, what was made of it (down to the stages
its versions hold), its profile as pictures, and its drift against another dataset."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from registry.errors import NotFound, UserError
from registry.service.queries.common import loads, moment
from registry.service.queries.distributions import Distribution, distribution
from registry.service.queries.reports import plain_number
from registry.service.queries.schemas import SchemaNode, schema_tree
from registry.service.recall import FlaggedVersion, downstream_of
from registry.store.catalogue import Catalogue
from registry.store.unit_of_work import UnitOfWork

SHOWN_FACTS = (("count", "values"), ("nulls", "empty"), ("min", "smallest"),
               ("max", "largest"), ("mean", "mean"), ("non_finite", "not finite"))


@dataclass(frozen=True)
class ColumnView:
    name: str
    avro_type: str
    facts: tuple[tuple[str, str], ...]
    picture: Distribution | None
    note: str  # why there is no picture: a key, an excluded column, nothing stored


@dataclass(frozen=True)
class ColumnDriftView:
    column: str
    psi: float
    level: str  # ok | warn | alarm (PSI 0.1 and 0.25, common practice)
    measures: tuple[tuple[str, str], ...]
    picture: Distribution | None


@dataclass(frozen=True)
class DriftView:
    reference: str
    jaccard: float | None
    containment: float | None
    columns: tuple[ColumnDriftView, ...]
    left_out: tuple[str, ...]  # keys and excluded columns, which drift says nothing about
    note: str = ""


@dataclass(frozen=True)
class DatasetPage:
    name: str
    role: str
    rows: int
    source_uri: str
    content_digest: str
    schema_fingerprint: str
    created_at: str
    created_by: str
    recalled_at: str
    recall_reason: str
    recalled_by: str
    flagged_by: tuple[str, ...]  # recalled datasets upstream of this one
    parents: tuple[str, ...]
    children: tuple[str, ...]
    linked_versions: tuple[tuple[str, int, str], ...]  # model, number, relation
    downstream_versions: tuple[FlaggedVersion, ...]  # everything made from it, with stages
    columns: tuple[ColumnView, ...]
    profile_present: bool
    schema_tree: SchemaNode | None
    others: tuple[str, ...]
    drift: DriftView | None
    # The files the dataset was made from: relative path, size in bytes, SHA-256.
    sources: tuple[tuple[str, int, str], ...] = ()


def _fingerprint(stored: Any):
    from registry.datasets import DatasetFingerprint

    try:
        return DatasetFingerprint.from_dict(stored)
    except Exception:  # a stored fingerprint this build cannot read: shown as missing
        return None


def _columns(stored: Any) -> tuple[tuple[ColumnView, ...], bool]:
    profile = stored.get("profile") if isinstance(stored, dict) else None
    if not isinstance(profile, dict):
        return (), False
    fingerprint = _fingerprint(stored)
    keys = set(fingerprint.keys) if fingerprint else set()
    excluded = set(fingerprint.excluded) if fingerprint else set()
    views = []
    for name, facts in profile.items():
        facts = facts if isinstance(facts, dict) else {}
        shown = tuple((label, plain_number(facts[key])) for key, label in SHOWN_FACTS
                      if facts.get(key) is not None)
        column = fingerprint.profile.get(name) if fingerprint else None
        picture, note = None, ""
        if name in keys:
            note = "the key column: every value identifies one record"
        else:
            picture = distribution(column) if column is not None else None
            if name in excluded:
                note = "excluded from the feature digest (a label or similar)"
            elif picture is None:
                note = "no distribution stored"
        views.append(ColumnView(str(name), str(facts.get("type", "")), shown, picture, note))
    return tuple(views), True


def _drift(reference_name: str, reference: Any, current: Any) -> DriftView:
    from registry.datasets import compare

    first, second = _fingerprint(reference), _fingerprint(current)
    if first is None or second is None:
        return DriftView(reference_name, None, None, (), (),
                         "the stored fingerprints cannot be compared")
    result = compare(first, second)
    left_out = set(first.keys) | set(first.excluded) | set(second.keys) | set(second.excluded)
    columns = []
    for column, drift in sorted(result.drift.items()):
        if column in left_out:
            continue
        measures = tuple((label, plain_number(value)) for label, value in (
            ("Kolmogorov-Smirnov statistic", drift.ks_statistic),
            ("its p-value", drift.ks_p_value), ("Jensen-Shannon divergence", drift.jensen_shannon),
            ("largest share difference", drift.l_infinity)) if value is not None)
        if drift.new_categories:
            measures += (("new categories", ", ".join(drift.new_categories)),)
        if drift.missing_categories:
            measures += (("categories gone", ", ".join(drift.missing_categories)),)
        columns.append(ColumnDriftView(column, drift.psi, drift.level, measures,
                                       distribution(first.profile[column],
                                                    second.profile[column])))
    return DriftView(reference_name, result.overlap.jaccard, result.overlap.containment,
                     tuple(columns), tuple(sorted(left_out)))


def dataset_page(catalogue: Catalogue, name: str, against: str | None = None) -> DatasetPage:
    if against is not None and against == name:
        raise UserError("compare a dataset with another one, not with itself", place="against")
    with UnitOfWork(catalogue, write=False) as uow:
        row = uow.datasets.named(name)
        if row is None:
            raise NotFound(f"unknown dataset {name!r}", place="dataset")
        stored = loads(uow.pages.blob(row.fingerprint_digest))
        drift = None
        if against is not None:
            other = uow.datasets.named(against)
            if other is None:
                raise NotFound(f"unknown dataset {against!r}", place="against")
            drift = _drift(against, loads(uow.pages.blob(other.fingerprint_digest)), stored)
        _, downstream = downstream_of(uow, row)
        columns, present = _columns(stored)
        return DatasetPage(
            name=row.name, role=row.role, rows=row.rows, source_uri=row.source_uri,
            content_digest=row.content_digest, schema_fingerprint=row.schema_fingerprint,
            created_at=moment(row.created_at), created_by=row.created_by,
            recalled_at=moment(row.recalled_at), recall_reason=row.recall_reason or "",
            recalled_by=row.recalled_by or "",
            flagged_by=tuple(uow.pages.recalled_upstream_datasets(row.id)),
            parents=tuple(uow.datasets.parent_names(row.id)),
            children=tuple(uow.pages.children(row.id)),
            linked_versions=tuple(uow.pages.versions_using(row.id)),
            downstream_versions=downstream, columns=columns, profile_present=present,
            schema_tree=schema_tree(loads(row.schema_json)),
            others=tuple(d.name for d in uow.datasets.all() if d.id != row.id), drift=drift,
            sources=tuple(uow.dataset_sources.of(row.id)))
