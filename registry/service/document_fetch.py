"""Handing a document to a scoring server: which stored bytes a version or a stage's holder
has, and those bytes in chunks, never loaded whole."""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass

from registry.errors import NotFound, StageNotHeld
from registry.names import check_name
from registry.service import gatekeeping
from registry.service.models import find_model
from registry.store.blob_store import read_range
from registry.store.catalogue import Catalogue
from registry.store.document_repository import DocumentRef
from registry.store.unit_of_work import UnitOfWork

# The content type each document kind is served with.
MEDIA_TYPES = {"pfa": "application/json"}
DEFAULT_MEDIA_TYPE = "application/octet-stream"
FILE_SUFFIXES = {"pfa": ".pfa.json"}


@dataclass(frozen=True)
class StoredDocument:
    """A document as registered: `sha256` of its bytes is its ETag and what a release
    statement's subject names."""

    model: str
    version: int
    sha256: str
    size: int
    kind: str

    @property
    def media_type(self) -> str:
        return MEDIA_TYPES.get(self.kind, DEFAULT_MEDIA_TYPE)

    @property
    def file_name(self) -> str:
        return f"{self.model}-v{self.version}{FILE_SUFFIXES.get(self.kind, '.bin')}"

    @classmethod
    def of(cls, ref: DocumentRef) -> StoredDocument:
        return cls(ref.model, ref.version, ref.blob_digest, ref.size, ref.kind)


def find_document(catalogue: Catalogue, model: str, *, version: int | None = None,
                  stage: str | None = None) -> StoredDocument:
    """The document of a version, or of the version holding a stage now (give one of them)."""
    check_name(model, what="model")
    with UnitOfWork(catalogue, write=False) as uow:
        line = find_model(uow, model)
        if version is not None:
            ref = uow.documents.of_version(model, version)
            if ref is None:
                raise NotFound(f"model {model!r} has no version {version}", place="version")
            return StoredDocument.of(ref)
        assert stage is not None
        check_name(stage, what="stage")
        policy = gatekeeping.policy_of(line)
        if stage not in (*policy.ladder, "retired"):
            raise NotFound(f"{model!r} has no stage {stage!r} (its ladder: "
                           f"{', '.join(policy.ladder)})", place="stage")
        ref = uow.documents.of_stage(model, stage)
        if ref is None:
            raise StageNotHeld(f"no version of {model!r} holds {stage!r}", place="stage")
        return StoredDocument.of(ref)


def document_chunks(catalogue: Catalogue, document: StoredDocument, start: int = 0,
                    end: int | None = None) -> Iterator[bytes]:
    """The document's bytes [start, end), a chunk at a time."""
    return read_range(catalogue.engine, document.sha256, start,
                      document.size if end is None else end)
