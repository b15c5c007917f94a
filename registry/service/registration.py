"""Registering a version: one transaction that stores the document, the version and its links."""

from __future__ import annotations

import json
from dataclasses import dataclass

from registry.canonical_json import digest_of
from registry.errors import NotFound, UserError
from registry.manifest import Manifest
from registry.names import check_name
from registry.service.actors import Actor
from registry.service.authorisation import authorise

# RegistrationRequest lives with the reading of a registration's contents; named here too
# because the shells build it as `registration.RegistrationRequest`.
from registry.service.contents import RegistrationRequest, VersionContents, read_version_contents
from registry.service.datasets import find_dataset
from registry.service.models import find_model
from registry.service.stages import enter_first_stage
from registry.store import tables as t
from registry.store.catalogue import Catalogue
from registry.store.unit_of_work import UnitOfWork, utc_now


@dataclass(frozen=True)
class RegistrationOutcome:
    model: str
    version: int
    created: bool  # False when an identical registration already existed
    document_digest: str
    registration_digest: str
    missing_features: tuple[str, ...] = ()


def registration_digest(model: str, contents: VersionContents, manifest: Manifest) -> str:
    """What makes two registrations the same version: recomputed by `audit verify`."""
    return digest_of(registration_record(model, contents.document_digest, contents.document_kind,
                                         contents.input_schema_json, contents.output_schema_json,
                                         contents.features_json, manifest.description,
                                         manifest.code_revision, manifest.author,
                                         manifest.trained_on, manifest.evaluated_on,
                                         manifest.parent_version, feed=manifest.feed))


def registration_record(model: str, document_digest: str, document_kind: str,
                        input_schema_json: str, output_schema_json: str | None,
                        features_json: str | None, description: str, code_revision: str,
                        author: str, trained_on, evaluated_on, parent_version,
                        feed: str | None = None) -> dict:
    record = {
        "model": model, "document_digest": document_digest, "document_kind": document_kind,
        "input_schema": json.loads(input_schema_json),
        "output_schema": json.loads(output_schema_json) if output_schema_json else None,
        "features": json.loads(features_json) if features_json else None,
        "description": description, "code_revision": code_revision, "author": author,
        "trained_on": sorted(trained_on), "evaluated_on": sorted(evaluated_on),
        "parent_version": parent_version,
    }
    if feed is not None:  # only when declared, so digests of versions without one stay as they were
        record["feed"] = feed
    return record


def stored_registration_digest(uow: UnitOfWork, version: t.Version, model: str) -> str:
    """A stored version's registration digest recomputed from its row, its lineage links and
    its declared feed, as `audit verify` recomputes it."""
    linked = uow.versions.lineage_names(version.id)
    feed = uow.feeds.declared_by_version(version)
    return digest_of(registration_record(
        model, version.document_digest, version.document_kind, version.input_schema_json,
        version.output_schema_json, version.features_json, version.description,
        version.code_revision, version.author, linked.get("trained-on", []),
        linked.get("evaluated-on", []), version.parent_number,
        feed=feed.name if feed is not None else None))


def _lineage_datasets(uow: UnitOfWork, names: tuple[str, ...], relation: str) -> list[t.Dataset]:
    found = []
    for name in names:
        try:
            found.append(find_dataset(uow, name))
        except NotFound:
            raise NotFound(f"unknown dataset {name!r} named in the manifest's "
                           f"{relation.replace('-', '_')}; register it with "
                           "`lockkeeper dataset add`",
                           place="manifest") from None
    return found


def register_version(catalogue: Catalogue, request: RegistrationRequest,
                     actor: Actor) -> RegistrationOutcome:
    check_name(request.model, what="model")
    # Pure work first, outside the transaction: parse and check everything the version holds.
    contents = read_version_contents(request)
    digest = registration_digest(request.model, contents, request.manifest)
    with UnitOfWork(catalogue) as uow:
        authorise(uow, actor, "version.register")
        model = find_model(uow, request.model)
        existing = uow.versions.with_registration(model.id, digest)
        if existing is not None:
            return RegistrationOutcome(model.name, existing.number, False,
                                       existing.document_digest, digest,
                                       contents.missing_features)
        feed = None
        if request.manifest.feed is not None:
            from registry.service.feeds import find_feed

            feed = find_feed(uow, request.manifest.feed, place="manifest: feed")
        trained = _lineage_datasets(uow, request.manifest.trained_on, "trained-on")
        evaluated = _lineage_datasets(uow, request.manifest.evaluated_on, "evaluated-on")
        number = uow.versions.last_number(model.id) + 1
        parent = request.manifest.parent_version
        if parent is not None and parent >= number:
            raise UserError(f"parent_version {request.manifest.parent_version} does not exist yet "
                            f"(this registration would be version {number})", place="manifest")
        stored_blob_digest = uow.blobs.put(contents.stored_document)
        document_digest = contents.document_digest
        version = t.Version(
            model_id=model.id, number=number, document_digest=document_digest,
            stored_blob_digest=stored_blob_digest,
            document_kind=contents.document_kind,
            document_summary_json=json.dumps(contents.document_summary, sort_keys=True),
            input_schema_json=contents.input_schema_json,
            output_schema_json=contents.output_schema_json,
            features_json=contents.features_json,
            description=request.manifest.description,
            code_revision=request.manifest.code_revision, author=request.manifest.author,
            parent_number=request.manifest.parent_version, registration_digest=digest,
            created_at=utc_now(), created_by=actor.name)
        uow.versions.add(version, [("trained-on", dataset) for dataset in trained]
                         + [("evaluated-on", dataset) for dataset in evaluated])
        if feed is not None:
            uow.feeds.set_for_version(version, feed)
        enter_first_stage(uow, model, version, actor)
        uow.audit.append(actor.name, "version.register", f"model/{model.name}/version/{number}", {
            "document_digest": document_digest, "registration_digest": digest,
            "stored_blob_digest": stored_blob_digest,
            "document_kind": contents.document_kind,
            **({"feed": feed.name} if feed is not None else {}),
        })
        uow.commit()
        return RegistrationOutcome(model.name, number, True, document_digest, digest,
                                   contents.missing_features)
