"""The catalogue's tables as SQLAlchemy 2.0 typed mappings.

Only Alembic revisions in migrations/ create or change these tables; a test compares the two.
"""

from __future__ import annotations

from datetime import datetime

from sqlalchemy import (
    Boolean,
    CheckConstraint,
    DateTime,
    ForeignKey,
    Index,
    Integer,
    LargeBinary,
    String,
    Text,
    UniqueConstraint,
    text,
)
from sqlalchemy.orm import DeclarativeBase, Mapped, mapped_column

NAME_LENGTH = 100


class Base(DeclarativeBase):
    pass


class Blob(Base):
    """Content-addressed bytes: documents, per-row predictions, large JSON evidence."""

    __tablename__ = "blobs"
    digest: Mapped[str] = mapped_column(String(64), primary_key=True)  # SHA-256, hex
    size: Mapped[int] = mapped_column(Integer)
    content: Mapped[bytes] = mapped_column(LargeBinary)


class Model(Base):
    __tablename__ = "models"
    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    name: Mapped[str] = mapped_column(String(NAME_LENGTH), unique=True)
    description: Mapped[str] = mapped_column(Text, default="")
    policy_toml: Mapped[str | None] = mapped_column(Text, nullable=True)
    created_at: Mapped[datetime] = mapped_column(DateTime(timezone=True))
    created_by: Mapped[str] = mapped_column(String(NAME_LENGTH))


class Version(Base):
    """One immutable registration; nothing here is ever updated after insert."""

    __tablename__ = "versions"
    __table_args__ = (
        UniqueConstraint("model_id", "number", name="uq_versions_model_number"),
        Index("ix_versions_model_registration", "model_id", "registration_digest"),
    )
    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    model_id: Mapped[int] = mapped_column(ForeignKey("models.id"))
    number: Mapped[int] = mapped_column(Integer)
    # The version's identity: SHA-256 of the canonical JSON for PFA, of the bytes otherwise.
    document_digest: Mapped[str] = mapped_column(String(64))
    # The bytes exactly as the producer sent them, stored by their own SHA-256.
    stored_blob_digest: Mapped[str] = mapped_column(ForeignKey("blobs.digest"))
    document_kind: Mapped[str] = mapped_column(String(20))
    document_summary_json: Mapped[str] = mapped_column(Text)
    input_schema_json: Mapped[str] = mapped_column(Text)
    output_schema_json: Mapped[str | None] = mapped_column(Text, nullable=True)
    features_json: Mapped[str | None] = mapped_column(Text, nullable=True)
    description: Mapped[str] = mapped_column(Text, default="")
    code_revision: Mapped[str] = mapped_column(String(200), default="")
    author: Mapped[str] = mapped_column(String(NAME_LENGTH), default="")
    parent_number: Mapped[int | None] = mapped_column(Integer, nullable=True)
    # SHA-256 of the canonical JSON of everything above that defines the version; recorded in
    # the audit log at registration so `audit verify` can find a change made behind our back.
    registration_digest: Mapped[str] = mapped_column(String(64))
    created_at: Mapped[datetime] = mapped_column(DateTime(timezone=True))
    created_by: Mapped[str] = mapped_column(String(NAME_LENGTH))


class Dataset(Base):
    __tablename__ = "datasets"
    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    name: Mapped[str] = mapped_column(String(NAME_LENGTH), unique=True)
    role: Mapped[str] = mapped_column(String(20))
    source_uri: Mapped[str] = mapped_column(Text, default="")
    rows: Mapped[int] = mapped_column(Integer)
    content_digest: Mapped[str] = mapped_column(String(64))
    schema_fingerprint: Mapped[str] = mapped_column(String(64))
    schema_json: Mapped[str] = mapped_column(Text)
    # The full fingerprint JSON.
    fingerprint_digest: Mapped[str] = mapped_column(ForeignKey("blobs.digest"))
    # For a live sample: the model whose feed it was taken from.
    feed_model_id: Mapped[int | None] = mapped_column(ForeignKey("models.id"), nullable=True)
    registration_digest: Mapped[str] = mapped_column(String(64))
    created_at: Mapped[datetime] = mapped_column(DateTime(timezone=True))
    created_by: Mapped[str] = mapped_column(String(NAME_LENGTH))
    recalled_at: Mapped[datetime | None] = mapped_column(DateTime(timezone=True), nullable=True)
    recall_reason: Mapped[str | None] = mapped_column(Text, nullable=True)
    recalled_by: Mapped[str | None] = mapped_column(String(NAME_LENGTH), nullable=True)


class DatasetParent(Base):
    """A derived-from edge: the child dataset was made from the parent."""

    __tablename__ = "dataset_parents"
    child_id: Mapped[int] = mapped_column(ForeignKey("datasets.id"), primary_key=True)
    parent_id: Mapped[int] = mapped_column(ForeignKey("datasets.id"), primary_key=True,
                                           index=True)


class VersionDataset(Base):
    """A version's lineage link to a dataset: trained-on or evaluated-on."""

    __tablename__ = "version_datasets"
    __table_args__ = (
        CheckConstraint("relation IN ('trained-on', 'evaluated-on')", name="ck_relation"),
    )
    version_id: Mapped[int] = mapped_column(ForeignKey("versions.id"), primary_key=True)
    dataset_id: Mapped[int] = mapped_column(ForeignKey("datasets.id"), primary_key=True,
                                            index=True)
    relation: Mapped[str] = mapped_column(String(20), primary_key=True)


class Evaluation(Base):
    __tablename__ = "evaluations"
    __table_args__ = (UniqueConstraint("version_id", "dataset_id", name="uq_evaluation"),)
    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    version_id: Mapped[int] = mapped_column(ForeignKey("versions.id"))
    dataset_id: Mapped[int] = mapped_column(ForeignKey("datasets.id"), index=True)
    dataset_content_digest: Mapped[str] = mapped_column(String(64))
    task: Mapped[str] = mapped_column(String(20))
    metrics_json: Mapped[str] = mapped_column(Text)
    predictions_digest: Mapped[str] = mapped_column(ForeignKey("blobs.digest"))
    created_at: Mapped[datetime] = mapped_column(DateTime(timezone=True))
    created_by: Mapped[str] = mapped_column(String(NAME_LENGTH))


class GateReportRow(Base):
    """Every check, promotion and rollback attempt, with the result of each gate."""

    __tablename__ = "gate_reports"
    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    model_id: Mapped[int] = mapped_column(ForeignKey("models.id"), index=True)
    version_id: Mapped[int] = mapped_column(ForeignKey("versions.id"))
    stage: Mapped[str] = mapped_column(String(NAME_LENGTH))
    attempt: Mapped[str] = mapped_column(String(20))  # promote | rollback
    passed: Mapped[bool] = mapped_column(Boolean)
    report_json: Mapped[str] = mapped_column(Text)
    created_at: Mapped[datetime] = mapped_column(DateTime(timezone=True))
    created_by: Mapped[str] = mapped_column(String(NAME_LENGTH))


class StageHolding(Base):
    """Who holds which stage now. Exclusive stages are held by one version, enforced here."""

    __tablename__ = "stage_holdings"
    __table_args__ = (
        UniqueConstraint("model_id", "stage", "version_id", name="uq_holding"),
        Index("uq_exclusive_stage", "model_id", "stage", unique=True,
              sqlite_where=text("is_exclusive"), postgresql_where=text("is_exclusive")),
    )
    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    model_id: Mapped[int] = mapped_column(ForeignKey("models.id"))
    version_id: Mapped[int] = mapped_column(ForeignKey("versions.id"))
    stage: Mapped[str] = mapped_column(String(NAME_LENGTH))
    is_exclusive: Mapped[bool] = mapped_column(Boolean)
    since: Mapped[datetime] = mapped_column(DateTime(timezone=True))
    report_id: Mapped[int | None] = mapped_column(ForeignKey("gate_reports.id"), nullable=True)
    # The version this one displaced from an exclusive stage: what `rollback` restores.
    previous_version_id: Mapped[int | None] = mapped_column(ForeignKey("versions.id"),
                                                            nullable=True)


class StageEvent(Base):
    """The timeline of stage changes: entered, left, rolled back, retired."""

    __tablename__ = "stage_events"
    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    model_id: Mapped[int] = mapped_column(ForeignKey("models.id"), index=True)
    version_id: Mapped[int] = mapped_column(ForeignKey("versions.id"), index=True)
    stage: Mapped[str] = mapped_column(String(NAME_LENGTH))
    event: Mapped[str] = mapped_column(String(20))
    details_json: Mapped[str] = mapped_column(Text, default="{}")
    report_id: Mapped[int | None] = mapped_column(ForeignKey("gate_reports.id"), nullable=True)
    created_at: Mapped[datetime] = mapped_column(DateTime(timezone=True))
    created_by: Mapped[str] = mapped_column(String(NAME_LENGTH))


class Approval(Base):
    __tablename__ = "approvals"
    __table_args__ = (UniqueConstraint("version_id", "stage", "approver", name="uq_approval"),)
    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    version_id: Mapped[int] = mapped_column(ForeignKey("versions.id"), index=True)
    stage: Mapped[str] = mapped_column(String(NAME_LENGTH))
    approver: Mapped[str] = mapped_column(String(NAME_LENGTH))
    note: Mapped[str] = mapped_column(Text, default="")
    created_at: Mapped[datetime] = mapped_column(DateTime(timezone=True))


class RoleGrant(Base):
    """Roles of local and token users: publisher, approver, admin."""

    __tablename__ = "role_grants"
    user: Mapped[str] = mapped_column(String(NAME_LENGTH), primary_key=True)
    role: Mapped[str] = mapped_column(String(20), primary_key=True)
    granted_at: Mapped[datetime] = mapped_column(DateTime(timezone=True))
    granted_by: Mapped[str] = mapped_column(String(NAME_LENGTH))


class ApiToken(Base):
    """A bearer token for the HTTP API, kept only as the SHA-256 of its secret."""

    __tablename__ = "api_tokens"
    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    token_hash: Mapped[str] = mapped_column(String(64), unique=True)
    user: Mapped[str] = mapped_column(String(NAME_LENGTH))
    role: Mapped[str] = mapped_column(String(20))
    label: Mapped[str] = mapped_column(Text, default="")
    created_at: Mapped[datetime] = mapped_column(DateTime(timezone=True))
    created_by: Mapped[str] = mapped_column(String(NAME_LENGTH))
    expires_at: Mapped[datetime | None] = mapped_column(DateTime(timezone=True), nullable=True)
    revoked_at: Mapped[datetime | None] = mapped_column(DateTime(timezone=True), nullable=True)


class AuditHead(Base):
    """One row: the newest event's number and hash. Locking it serialises every writer."""

    __tablename__ = "audit_head"
    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    sequence: Mapped[int] = mapped_column(Integer)
    hash: Mapped[str] = mapped_column(String(64))


class AuditEvent(Base):
    """Append-only and hash-chained: each event's hash covers its content and its predecessor's."""

    __tablename__ = "audit_events"
    sequence: Mapped[int] = mapped_column(Integer, primary_key=True, autoincrement=False)
    occurred_at: Mapped[str] = mapped_column(String(40))  # ISO 8601 UTC, hashed as written
    actor: Mapped[str] = mapped_column(String(NAME_LENGTH))
    action: Mapped[str] = mapped_column(String(40))
    subject: Mapped[str] = mapped_column(Text)
    details_json: Mapped[str] = mapped_column(Text)
    previous_hash: Mapped[str] = mapped_column(String(64))
    hash: Mapped[str] = mapped_column(String(64))
