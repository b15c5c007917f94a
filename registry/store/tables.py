"""The catalogue's tables as SQLAlchemy 2.0 typed mappings.

Only Alembic revisions in migrations/ create or change these tables; a test compares the two.
"""

from __future__ import annotations

from datetime import datetime

from sqlalchemy import (
    BigInteger,
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
    """Content-addressed bytes: documents, per-row predictions, large JSON evidence. The bytes
    themselves are in `blob_chunks`, so a large document is read a piece at a time."""

    __tablename__ = "blobs"
    digest: Mapped[str] = mapped_column(String(64), primary_key=True)  # SHA-256, hex
    size: Mapped[int] = mapped_column(Integer)


class BlobChunk(Base):
    """One piece of a blob's bytes: those from byte `position` on (registry/store/blob_store.py
    cuts them; an empty blob has none). Only the blob store reads or writes these rows."""

    __tablename__ = "blob_chunks"
    digest: Mapped[str] = mapped_column(ForeignKey("blobs.digest"), primary_key=True)
    position: Mapped[int] = mapped_column(BigInteger, primary_key=True)
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


class DatasetSource(Base):
    """One file a dataset was made from: its path within the dataset, its size and SHA-256."""

    __tablename__ = "dataset_sources"
    dataset_id: Mapped[int] = mapped_column(ForeignKey("datasets.id"), primary_key=True)
    position: Mapped[int] = mapped_column(Integer, primary_key=True)  # in the dataset's order
    path: Mapped[str] = mapped_column(Text)
    size: Mapped[int] = mapped_column(BigInteger)
    sha256: Mapped[str] = mapped_column(String(64), index=True)


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


class ReleaseStatementRow(Base):
    """A signed release statement: a DSSE envelope around an in-toto statement that a version's
    document entered or left an exclusive stage (registry/signing/statements.py)."""

    __tablename__ = "release_statements"
    __table_args__ = (
        CheckConstraint("move IN ('entered', 'left')", name="ck_release_move"),
        Index("ix_release_statements_stage", "model_id", "stage", "id"),
    )
    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    model_id: Mapped[int] = mapped_column(ForeignKey("models.id"))
    version_id: Mapped[int] = mapped_column(ForeignKey("versions.id"), index=True)
    stage: Mapped[str] = mapped_column(String(NAME_LENGTH))
    move: Mapped[str] = mapped_column(String(10))
    envelope_json: Mapped[str] = mapped_column(Text)
    # SHA-256 of the envelope's bytes as served: its ETag and its name in links.
    envelope_digest: Mapped[str] = mapped_column(String(64), unique=True)
    key_id: Mapped[str | None] = mapped_column(String(64), nullable=True)  # None: unsigned
    audit_sequence: Mapped[int] = mapped_column(Integer)
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
    # Digests of every deciding row the event's transaction wrote (docs/row-coverage.md);
    # hashed with the event. Empty on events that wrote no covered row.
    rows_json: Mapped[str | None] = mapped_column(Text, nullable=True)


class Feed(Base):
    """A feed as a contract: the stream of input records a producer team writes, with numbered
    writer-schema versions and a retention window (how long old records stay in flight)."""

    __tablename__ = "feeds"
    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    name: Mapped[str] = mapped_column(String(NAME_LENGTH), unique=True)
    description: Mapped[str] = mapped_column(Text, default="")
    retain_days: Mapped[int] = mapped_column(Integer)
    created_at: Mapped[datetime] = mapped_column(DateTime(timezone=True))
    created_by: Mapped[str] = mapped_column(String(NAME_LENGTH))


class FeedSchema(Base):
    """One published writer schema of a feed: numbered 1, 2, 3 and never changed."""

    __tablename__ = "feed_schemas"
    __table_args__ = (UniqueConstraint("feed_id", "number", name="uq_feed_schemas_number"),)
    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    feed_id: Mapped[int] = mapped_column(ForeignKey("feeds.id"))
    number: Mapped[int] = mapped_column(Integer)
    schema_json: Mapped[str] = mapped_column(Text)
    # SHA-256 of the Parsing Canonical Form: publishing the same schema twice is a no-op.
    fingerprint: Mapped[str] = mapped_column(String(64))
    note: Mapped[str] = mapped_column(Text, default="")
    published_at: Mapped[datetime] = mapped_column(DateTime(timezone=True))
    published_by: Mapped[str] = mapped_column(String(NAME_LENGTH))


class FeedSource(Base):
    """A built-from edge: the feed's records are made from this dataset's source."""

    __tablename__ = "feed_sources"
    feed_id: Mapped[int] = mapped_column(ForeignKey("feeds.id"), primary_key=True)
    dataset_id: Mapped[int] = mapped_column(ForeignKey("datasets.id"), primary_key=True,
                                            index=True)


class ModelFeed(Base):
    """The feed a model reads, declared on the model (a version's manifest may name its own)."""

    __tablename__ = "model_feeds"
    model_id: Mapped[int] = mapped_column(ForeignKey("models.id"), primary_key=True)
    feed_id: Mapped[int] = mapped_column(ForeignKey("feeds.id"), index=True)


class VersionFeed(Base):
    """The feed a version's manifest declares; written at registration, never changed."""

    __tablename__ = "version_feeds"
    version_id: Mapped[int] = mapped_column(ForeignKey("versions.id"), primary_key=True)
    feed_id: Mapped[int] = mapped_column(ForeignKey("feeds.id"), index=True)


class Consumer(Base):
    """A declared reader of a model's output."""

    __tablename__ = "consumers"
    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    name: Mapped[str] = mapped_column(String(NAME_LENGTH), unique=True)
    model_id: Mapped[int] = mapped_column(ForeignKey("models.id"), index=True)
    owner: Mapped[str] = mapped_column(Text, default="")
    created_at: Mapped[datetime] = mapped_column(DateTime(timezone=True))
    created_by: Mapped[str] = mapped_column(String(NAME_LENGTH))


class ConsumerSchema(Base):
    """One reader schema of a consumer: numbered 1, 2, 3; the newest is the one it reads with."""

    __tablename__ = "consumer_schemas"
    __table_args__ = (UniqueConstraint("consumer_id", "number", name="uq_consumer_schemas_number"),)
    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    consumer_id: Mapped[int] = mapped_column(ForeignKey("consumers.id"))
    number: Mapped[int] = mapped_column(Integer)
    schema_json: Mapped[str] = mapped_column(Text)
    fingerprint: Mapped[str] = mapped_column(String(64))
    note: Mapped[str] = mapped_column(Text, default="")
    created_at: Mapped[datetime] = mapped_column(DateTime(timezone=True))
    created_by: Mapped[str] = mapped_column(String(NAME_LENGTH))


class SigningKeyRow(Base):
    """The public half of each signing key the catalogue has had; the newest unretired one is
    current. The private half lives only in the key file."""

    __tablename__ = "signing_keys"
    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    key_id: Mapped[str] = mapped_column(String(64), unique=True)  # SHA-256 of the raw public key
    algorithm: Mapped[str] = mapped_column(String(20))
    public_key_pem: Mapped[str] = mapped_column(Text)
    created_at: Mapped[datetime] = mapped_column(DateTime(timezone=True))
    retired_at: Mapped[datetime | None] = mapped_column(DateTime(timezone=True), nullable=True)


class Checkpoint(Base):
    """The catalogue's signature over (event count, head hash, time): a cut or rewritten history
    no longer extends it. Self-certifying, so not itself covered by the chain."""

    __tablename__ = "checkpoints"
    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    sequence: Mapped[int] = mapped_column(Integer, index=True)
    head_hash: Mapped[str] = mapped_column(String(64))
    signed_at: Mapped[str] = mapped_column(String(40))  # ISO 8601 UTC, signed as written
    key_id: Mapped[str] = mapped_column(String(64))
    signature: Mapped[str] = mapped_column(String(128))  # hex of the 64-byte Ed25519 signature


class ServedBatch(Base):
    """One batch a serving system sent back (served rows, or outcomes), kept by its digest so
    that sending the same batch again changes nothing."""

    __tablename__ = "served_batches"
    __table_args__ = (
        UniqueConstraint("model_id", "kind", "digest", name="uq_served_batch"),
        CheckConstraint("kind IN ('served', 'outcomes')", name="ck_served_batch_kind"),
    )
    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    model_id: Mapped[int] = mapped_column(ForeignKey("models.id"))
    kind: Mapped[str] = mapped_column(String(20))
    digest: Mapped[str] = mapped_column(String(64))  # SHA-256 of the batch as sent
    rows: Mapped[int] = mapped_column(Integer)
    details_json: Mapped[str] = mapped_column(Text, default="{}")
    created_at: Mapped[datetime] = mapped_column(DateTime(timezone=True))
    created_by: Mapped[str] = mapped_column(String(NAME_LENGTH))


class ServedWindow(Base):
    """The mergeable summary of what one version served in one window: rows, input profiles
    and prediction profiles. One row per model, version and window, whatever the traffic."""

    __tablename__ = "served_windows"
    __table_args__ = (
        UniqueConstraint("model_id", "version_id", "window_start", "window_seconds",
                         name="uq_served_window"),
    )
    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    model_id: Mapped[int] = mapped_column(ForeignKey("models.id"), index=True)
    version_id: Mapped[int] = mapped_column(ForeignKey("versions.id"))
    window_start: Mapped[int] = mapped_column(BigInteger)  # seconds since the epoch, UTC
    window_seconds: Mapped[int] = mapped_column(Integer)
    rows: Mapped[int] = mapped_column(BigInteger)
    summary_json: Mapped[str] = mapped_column(Text)
    # The report's figures of this window (drift, agreement, live quality), recomputed whenever
    # a batch or an outcome touches the window; they outlive the compact rows.
    figures_json: Mapped[str | None] = mapped_column(Text, nullable=True)
    updated_at: Mapped[datetime] = mapped_column(DateTime(timezone=True))


class ServedRows(Base):
    """Compact columns of one batch's rows in one window (hashed row ids and predictions, or
    hashed row ids and outcomes), kept for the joins and dropped after the policy's retention."""

    __tablename__ = "served_rows"
    __table_args__ = (
        Index("ix_served_rows_window", "model_id", "window_start"),
        CheckConstraint("kind IN ('predictions', 'outcomes')", name="ck_served_rows_kind"),
    )
    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    model_id: Mapped[int] = mapped_column(ForeignKey("models.id"))
    batch_id: Mapped[int] = mapped_column(ForeignKey("served_batches.id"), index=True)
    kind: Mapped[str] = mapped_column(String(20))
    version_id: Mapped[int | None] = mapped_column(ForeignKey("versions.id"), nullable=True)
    window_start: Mapped[int] = mapped_column(BigInteger)
    rows: Mapped[int] = mapped_column(Integer)
    content: Mapped[bytes] = mapped_column(LargeBinary)
