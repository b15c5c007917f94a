"""Use cases on datasets: register a fingerprinted dataset with its parents, show, load back.

Fingerprinting a file is pure and can take long, so shells do it before the transaction; the
use case only checks and stores what it is given (a producer may compute the fingerprint on its
own side and send it).
"""

from __future__ import annotations

import json
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

from registry.canonical_json import canonical_json, digest_of
from registry.errors import AlreadyExists, NotFound, UserError
from registry.moments import utc_iso
from registry.names import check_name
from registry.node_ids import dataset_id
from registry.service.actors import Actor
from registry.service.authorisation import authorise
from registry.service.models import find_model
from registry.store import tables as t
from registry.store.catalogue import Catalogue
from registry.store.unit_of_work import UnitOfWork, utc_now
from registry.suggest import did_you_mean

if TYPE_CHECKING:
    from registry.datasets import DatasetFingerprint

DATASET_ROLES = ("source", "training", "evaluation", "live-sample")


@dataclass(frozen=True)
class DatasetRequest:
    name: str
    role: str
    fingerprint: DatasetFingerprint
    source_uri: str = ""
    derived_from: tuple[str, ...] = ()
    feed_of: str | None = None  # for a live sample: the model whose feed it was taken from
    # the files it was made from: (path within the dataset, size, SHA-256), in order
    sources: tuple[tuple[str, int, str], ...] = ()


@dataclass(frozen=True)
class DatasetSummary:
    name: str
    role: str
    rows: int
    content_digest: str
    schema_fingerprint: str
    source_uri: str
    derived_from: list[str]
    feed_of: str | None
    created_at: str
    created_by: str
    recalled: bool
    recall_reason: str | None = None
    created: bool = True
    profile: dict[str, Any] = field(default_factory=dict)
    sources: list[dict[str, Any]] = field(default_factory=list)  # path, size, sha256 per file


def find_dataset(uow: UnitOfWork, name: str) -> t.Dataset:
    dataset = uow.datasets.named(name)
    if dataset is None:
        raise NotFound(f"unknown dataset {name!r}{did_you_mean(name, uow.names.datasets())}",
                       place="dataset")
    return dataset


def parents_of(uow: UnitOfWork, dataset: t.Dataset) -> list[str]:
    return uow.datasets.parent_names(dataset.id)


def load_fingerprint(uow: UnitOfWork, dataset: t.Dataset) -> DatasetFingerprint:
    from registry.datasets import DatasetFingerprint

    return DatasetFingerprint.from_dict(json.loads(uow.blobs.get(dataset.fingerprint_digest)))


def dataset_registration_digest(name: str, role: str, source_uri: str, content_digest: str,
                                schema_fingerprint: str, fingerprint_digest: str,
                                parents: list[str], feed_of: str | None,
                                sources: Sequence[tuple[str, int, str]] = ()) -> str:
    """What makes two dataset registrations the same; recomputed by `audit verify`. The
    source files count only when recorded, so digests of datasets registered without them
    stay as they were."""
    identity: dict[str, object] = {
        "name": name, "role": role, "source_uri": source_uri,
        "content_digest": content_digest, "schema_fingerprint": schema_fingerprint,
        "fingerprint_digest": fingerprint_digest, "derived_from": sorted(parents),
        "feed_of": feed_of}
    if sources:
        identity["sources"] = [list(source) for source in sources]
    return digest_of(identity)


def check_sources(sources: Sequence[Any]) -> tuple[tuple[str, int, str], ...]:
    """(path, size, sha256) of each source file, or an error naming the bad entry."""
    checked = []
    for index, source in enumerate(sources):
        try:
            path, size, sha256 = source
            valid = (isinstance(path, str) and 0 < len(path) <= 4096 and isinstance(size, int)
                     and size >= 0 and isinstance(sha256, str) and len(sha256) == 64
                     and all(c in "0123456789abcdef" for c in sha256))
        except (TypeError, ValueError):
            valid = False
        if not valid:
            raise UserError("a source file needs a path, a size in bytes and a SHA-256 in hex",
                            place=f"sources/{index}")
        checked.append((path, size, sha256))
    if len({path for path, _, _ in checked}) != len(checked):
        raise UserError("a source file is listed twice", place="sources")
    return tuple(checked)


def _summary(uow: UnitOfWork, dataset: t.Dataset, *, created: bool = True,
             with_profile: bool = False) -> DatasetSummary:
    feed_of = (uow.models.by_id(dataset.feed_model_id).name if dataset.feed_model_id
               else None)
    profile = load_fingerprint(uow, dataset).to_dict().get("profile", {}) if with_profile else {}
    return DatasetSummary(
        name=dataset.name, role=dataset.role, rows=dataset.rows,
        content_digest=dataset.content_digest, schema_fingerprint=dataset.schema_fingerprint,
        source_uri=dataset.source_uri, derived_from=parents_of(uow, dataset), feed_of=feed_of,
        created_at=utc_iso(dataset.created_at), created_by=dataset.created_by,
        recalled=dataset.recalled_at is not None, recall_reason=dataset.recall_reason,
        created=created, profile=profile,
        sources=[{"path": path, "size": size, "sha256": sha256}
                 for path, size, sha256 in uow.dataset_sources.of(dataset.id)])


def _differences(uow: UnitOfWork, existing: t.Dataset, request: DatasetRequest,
                 parents: list[t.Dataset], feed_model: t.Model | None) -> list[str]:
    """What a second registration under a taken name changes: each field, registered -> now."""
    def change(what: str, registered: Any, now: Any) -> str:
        return f"{what} ({registered or 'none'} registered, {now or 'none'} now)"

    new = request.fingerprint.to_dict()
    old = load_fingerprint(uow, existing).to_dict()
    found = []
    if existing.role != request.role:
        found.append(change("role", existing.role, request.role))
    if existing.content_digest != request.fingerprint.content_digest:
        found.append(change("records (content digest)", existing.content_digest[:12],
                            request.fingerprint.content_digest[:12]))
    if existing.schema_fingerprint != request.fingerprint.schema_fingerprint:
        found.append(change("schema", existing.schema_fingerprint[:12],
                            request.fingerprint.schema_fingerprint[:12]))
    for field_name, option in (("keys", "key columns"), ("excluded", "excluded columns")):
        if sorted(old.get(field_name, [])) != sorted(new.get(field_name, [])):
            found.append(change(option, ", ".join(old.get(field_name, [])),
                                ", ".join(new.get(field_name, []))))
    before, after = parents_of(uow, existing), sorted(p.name for p in parents)
    if before != after:
        found.append(change("derived from", ", ".join(before), ", ".join(after)))
    feed_before = uow.names.model_name(existing.feed_model_id) if existing.feed_model_id else None
    if feed_before != (feed_model and feed_model.name):
        found.append(change("feed of", feed_before, feed_model and feed_model.name))
    if existing.source_uri != request.source_uri:
        found.append(change("source", existing.source_uri, request.source_uri))
    files_before = uow.dataset_sources.of(existing.id)
    files_now = list(check_sources(request.sources))
    if files_before != files_now:
        found.append(change("source files", f"{len(files_before)} files",
                            f"{len(files_now)} files, other names, sizes or contents"))
    return found or ["its fingerprint"]


def add_dataset(catalogue: Catalogue, request: DatasetRequest, actor: Actor) -> DatasetSummary:
    """Register a dataset; the same name with the same content again changes nothing."""
    check_name(request.name, what="dataset")
    if request.role not in DATASET_ROLES:
        raise UserError(f"unknown dataset role {request.role!r}; roles are "
                        f"{', '.join(DATASET_ROLES)}", place="--role")
    if request.feed_of is not None and request.role != "live-sample":
        raise UserError("--feed-of names the model a live sample was taken from; use it with "
                        "--role live-sample", place="--feed-of")
    if request.name in request.derived_from:
        raise UserError("a dataset cannot be derived from itself", place="--derived-from")
    sources = check_sources(request.sources)
    fingerprint_bytes = canonical_json(request.fingerprint.to_dict())
    with UnitOfWork(catalogue) as uow:
        authorise(uow, actor, "dataset.add")
        parents = [find_dataset(uow, name) for name in sorted(set(request.derived_from))]
        feed_model = find_model(uow, request.feed_of) if request.feed_of else None
        fingerprint_digest = uow.blobs.put(fingerprint_bytes)
        digest = dataset_registration_digest(
            request.name, request.role, request.source_uri, request.fingerprint.content_digest,
            request.fingerprint.schema_fingerprint, fingerprint_digest,
            [p.name for p in parents], request.feed_of, sources)
        existing = uow.datasets.named(request.name)
        if existing is not None:
            if existing.registration_digest == digest:
                return _summary(uow, existing, created=False)
            differing = "; ".join(_differences(uow, existing, request, parents, feed_model))
            raise AlreadyExists(f"a dataset named {request.name!r} is already registered and "
                                f"this one differs in {differing}; datasets never change, so "
                                "give this one a new name", place="dataset")
        dataset = t.Dataset(
            name=request.name, role=request.role, source_uri=request.source_uri,
            rows=request.fingerprint.rows, content_digest=request.fingerprint.content_digest,
            schema_fingerprint=request.fingerprint.schema_fingerprint,
            schema_json=json.dumps(request.fingerprint.schema_json, sort_keys=True),
            fingerprint_digest=fingerprint_digest, registration_digest=digest,
            feed_model_id=feed_model.id if feed_model else None,
            created_at=utc_now(), created_by=actor.name)
        uow.datasets.add(dataset, parents)
        uow.dataset_sources.add(dataset.id, sources)
        uow.audit.append(actor.name, "dataset.add", dataset_id(request.name), {
            "registration_digest": digest, "content_digest": request.fingerprint.content_digest,
            "fingerprint_digest": fingerprint_digest, "role": request.role,
            "derived_from": [p.name for p in parents], "files": len(sources)})
        summary = _summary(uow, dataset)
        uow.commit()
        return summary


def show_dataset(catalogue: Catalogue, name: str) -> DatasetSummary:
    with UnitOfWork(catalogue, write=False) as uow:
        return _summary(uow, find_dataset(uow, name), with_profile=True)


def list_datasets(catalogue: Catalogue) -> list[DatasetSummary]:
    with UnitOfWork(catalogue, write=False) as uow:
        rows = uow.datasets.all()
        return [_summary(uow, row) for row in rows]


def fingerprint_of(catalogue: Catalogue, name: str) -> DatasetFingerprint:
    with UnitOfWork(catalogue, write=False) as uow:
        return load_fingerprint(uow, find_dataset(uow, name))
