"""The evidence the gates judge: plain, frozen records that the service layer fills in.

Every field is a str, int, float, bool, None, a tuple of these records, or a dict of plain values,
so `to_plain` gives a JSON-ready document. Times are ISO 8601
strings with a UTC offset (`2026-11-30T09:00:00Z`). Datasets are named as in the catalogue
(`brackwater-training-set`); dataset fingerprints are their content digests.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Mapping
from datetime import UTC, datetime
from typing import Any

from registry.errors import Unprocessable

APPROVER = "approver"  # the role that may approve, acknowledge and waive
CLASSIFICATIONS = ("safe", "needs-review", "breaking")
WITNESS_KINDS = ("enum_symbol", "union_branch", "null")
DATASET_ROLES = ("training", "evaluation")


class EvidenceError(Unprocessable):
    """Evidence that cannot be judged: a malformed time, an unknown classification, a bad role."""


@dataclasses.dataclass(frozen=True)
class Waiver:
    """An approver's recorded override of one failed gate.

    gate: the gate id it overrides (`slice-guard`); approver: the acting user's login name;
    reason: why, in the approver's words (never empty).
    """

    gate: str
    approver: str
    reason: str


@dataclasses.dataclass(frozen=True)
class SchemaProblem:
    """One reason a reader schema cannot resolve a writer schema (Avro specification, Schema
    Resolution).

    path: JSON pointer into the reader schema, e.g. `/fields/diameter_mm/type`.
    rule: the resolution rule that failed, as the schema package names it (`type-mismatch`).
    message: one sentence a person can act on.
    witness: what in data written with the writer schema would fail to resolve; empty when every
      record would (a plain type mismatch). Keys: `enum_symbol` (a writer symbol the reader lacks),
      `union_branch` (the writer branch, `null` or a type name, that the reader cannot take),
      `null` (true: a writer null the reader cannot take), and optionally `column` (the top-level
      live-sample column the witness lives in; by default the first `/fields/<name>` of `path`).
    """

    path: str
    rule: str
    message: str
    witness: Mapping[str, Any] = dataclasses.field(default_factory=dict)

    def __post_init__(self) -> None:
        unknown = set(self.witness) - set(WITNESS_KINDS) - {"column"}
        if unknown:
            raise EvidenceError(f"unknown witness key {sorted(unknown)[0]!r}; known: "
                                f"{', '.join(WITNESS_KINDS)}, column", place=self.path)


@dataclasses.dataclass(frozen=True)
class SchemaCheck:
    """The result of resolving one version's schema (reader) against another's (writer).

    reader_version, writer_version: version numbers of the same model.
    compatible: true when every datum written with the writer schema resolves.
    problems: why not, when incompatible. notes: what resolution ignored or remarked on.
    """

    reader_version: int
    writer_version: int
    compatible: bool
    problems: tuple[SchemaProblem, ...] = ()
    notes: tuple[str, ...] = ()


@dataclasses.dataclass(frozen=True)
class FeedSchemaCheck:
    """A version's input schema (reader) against one writer schema of its declared feed.

    feed: the feed's name; feed_version: the number of the feed's writer schema; published_at:
    when it was published; is_current: the newest published schema (older ones are still in
    flight within the feed's retention window); version: the model version reading;
    compatible, problems, notes: as in SchemaCheck.
    """

    feed: str
    feed_version: int
    published_at: str
    is_current: bool
    version: int
    compatible: bool
    problems: tuple[SchemaProblem, ...] = ()
    notes: tuple[str, ...] = ()


@dataclasses.dataclass(frozen=True)
class ConsumerCheck:
    """A declared consumer's current reader schema against a version's output schema (writer).

    consumer: its name; schema_version: the number of its reader schema; owner: who runs it;
    version: the model version writing; compatible, problems, notes: as in SchemaCheck.
    """

    consumer: str
    schema_version: int
    owner: str
    version: int
    compatible: bool
    problems: tuple[SchemaProblem, ...] = ()
    notes: tuple[str, ...] = ()


@dataclasses.dataclass(frozen=True)
class ColumnCounts:
    """Occurrence counts of one top-level column of the live sample.

    enum_symbols: symbol -> rows holding it (symbols never seen may be absent or 0).
    union_branches: branch name (`null`, `string`, a full record name) -> rows taking it.
    nulls: rows holding null.
    """

    enum_symbols: Mapping[str, int] = dataclasses.field(default_factory=dict)
    union_branches: Mapping[str, int] = dataclasses.field(default_factory=dict)
    nulls: int = 0


@dataclasses.dataclass(frozen=True)
class SampleProfile:
    """The profile of the registered live sample: records the live feed actually wrote.

    dataset: its catalogue name; fingerprint: its content digest; rows: how many records;
    columns: column name -> counts (only the columns that were profiled).
    """

    dataset: str
    fingerprint: str
    rows: int
    columns: Mapping[str, ColumnCounts] = dataclasses.field(default_factory=dict)


@dataclasses.dataclass(frozen=True)
class FeatureChange:
    """One change in the semantic diff of feature definitions, incumbent to candidate.

    field: the candidate's field name (`mean_pressure_psi`); kind: what changed, as the features
    package names it (`unit-changed`); classification: `safe`, `needs-review` or `breaking`;
    message: one sentence (`unit changed from kPa to [psi]`).
    """

    field: str
    kind: str
    classification: str
    message: str

    def __post_init__(self) -> None:
        if self.classification not in CLASSIFICATIONS:
            raise EvidenceError(f"classification must be one of {', '.join(CLASSIFICATIONS)}, "
                                f"not {self.classification!r}", place=self.field)


@dataclasses.dataclass(frozen=True)
class Acknowledgement:
    """An approver's acknowledgement of one needs-review feature change.

    field: the changed field it acknowledges; user, roles: who acknowledged and the roles they held
    then; at: when; note: what they checked.
    """

    field: str
    user: str
    roles: tuple[str, ...]
    at: str
    note: str = ""


@dataclasses.dataclass(frozen=True)
class PairedComparison:
    """Candidate against incumbent on one metric, from predictions of both on the same rows.

    metric: a metric name (`roc_auc`, `log_loss`, ...). difference: candidate minus incumbent.
    ci_low, ci_high: the two-sided interval of the difference at `confidence` (0.95 = 95 %).
    p_value: of the test that the difference is zero. method: `delong`, `paired-bootstrap`,
    `mcnemar`. higher_is_better: the metric's direction. candidate_dataset, incumbent_dataset:
    fingerprints of the evaluation dataset each side was scored on. candidate_value,
    incumbent_value, rows: the metric of each side and the paired row count, when known.
    """

    metric: str
    difference: float
    ci_low: float
    ci_high: float
    p_value: float
    method: str
    higher_is_better: bool
    candidate_dataset: str
    incumbent_dataset: str
    confidence: float = 0.95
    candidate_value: float | None = None
    incumbent_value: float | None = None
    rows: int | None = None


@dataclasses.dataclass(frozen=True)
class SliceComparison:
    """Candidate against incumbent on one metric within one slice of the evaluation rows.

    column, value: the slice (`district`, `OLD_TOWN`). The other fields read as in
    PairedComparison; adjusted_p_value: Holm-Bonferroni adjusted across the slices, when the
    evaluation package already adjusted it (the slice gate adjusts otherwise).
    """

    column: str
    value: str
    metric: str
    difference: float
    ci_low: float
    ci_high: float
    p_value: float
    higher_is_better: bool
    adjusted_p_value: float | None = None
    confidence: float = 0.95
    rows: int | None = None


@dataclasses.dataclass(frozen=True)
class ContainmentEstimate:
    """The share of the evaluation set's distinct feature-only record hashes that also occur in
    the training set (labels left out, so a relabelled copy still counts).

    training_dataset, evaluation_dataset: catalogue names. containment: the estimate in [0, 1].
    error_bound: its absolute error bound (bottom-k sketches: about 1/sqrt(k)). method: how it
    was estimated (`bottom-k`, `exact`).
    """

    training_dataset: str
    evaluation_dataset: str
    containment: float
    error_bound: float
    method: str = "bottom-k"


@dataclasses.dataclass(frozen=True)
class DatasetRecord:
    """One dataset the candidate names in its manifest.

    name: as in the manifest; role: `training` or `evaluation`; registered: whether the catalogue
    holds it; registered_at: when it was registered; fingerprint: its content digest;
    data_as_of: the time of its newest record when known (fresh-data prefers it to registered_at).
    """

    name: str
    role: str
    registered: bool
    registered_at: str | None = None
    fingerprint: str | None = None
    data_as_of: str | None = None

    def __post_init__(self) -> None:
        if self.role not in DATASET_ROLES:
            raise EvidenceError(f"dataset role must be training or evaluation, not {self.role!r}",
                                place=self.name)


@dataclasses.dataclass(frozen=True)
class RecalledDataset:
    """A recalled dataset upstream of the candidate (or one of its own datasets).

    name: the recalled dataset; reason: why it was recalled; recalled_at: when;
    via: the derived-from chain from it down to the candidate's dataset, recalled one first.
    """

    name: str
    reason: str
    recalled_at: str
    via: tuple[str, ...] = ()


@dataclasses.dataclass(frozen=True)
class Approval:
    """A recorded approval of the candidate version.

    user, roles: who approved and the roles they held then; at: when;
    stage: the stage it approves entry into, or None for any stage.
    """

    user: str
    roles: tuple[str, ...]
    at: str
    stage: str | None = None


@dataclasses.dataclass(frozen=True)
class ShadowAgreement:
    """How the candidate agreed with the incumbent on live rows both scored.

    against: the incumbent's version number; task: `binary`, `regression` or `multiclass`;
    rows: row ids both scored within the retention; share_agreeing: binary, the share on the
    same side of the decision threshold; multiclass, the share with the same top class; None
    for regression. mean_absolute_difference, spearman: as the serving report shows them.
    """

    against: int
    task: str
    rows: int
    share_agreeing: float | None = None
    mean_absolute_difference: float | None = None
    spearman: float | None = None


@dataclasses.dataclass(frozen=True)
class Evidence:
    """Everything the gates may look at for one attempt to move one version into one stage.

    model, version, author: the candidate. evaluated_at: the time of the attempt (the pure core
    never reads a clock). code_revision: from the manifest, None when absent.
    incumbent_version: the version now holding the top of the ladder (its input schema is the
    feed's writer schema; its evaluation is the baseline), None when there is none yet.
    feed: candidate input (reader) against the incumbent's input (writer).
    past_feeds: candidate input against the input of every earlier holder of the top stage.
    rollback: incumbent input (reader) against candidate input (writer).
    output: incumbent output (the consumers' reader) against candidate output (writer).
    live_sample: profile of the registered live sample, None when none is registered.
    feature_changes: the semantic feature diff, incumbent to candidate.
    acknowledgements: of needs-review feature changes.
    comparisons, slices: paired comparisons against the incumbent, overall and per slice.
    containment: one estimate per (training, evaluation) dataset pair.
    datasets: the candidate's training and evaluation datasets.
    recalled_upstream: recalled datasets upstream of the candidate.
    approvals: recorded approvals of the candidate.
    holds_top_stage: the top stage's name when the candidate holds it itself (so there is no
      incumbent other than itself), else None.
    feed_name: the feed the candidate declares it reads (on its model or in its manifest), None
      when it declares none; then the gates compare against the incumbent as before.
    feed_checks: the candidate reading every schema of that feed still in flight.
    rollback_feed_checks: the incumbent (the version a rollback restores) reading the same.
    consumer_checks: every declared consumer of the model reading the candidate's output; empty
      when no consumer is declared (the consumers are then taken to read the incumbent's output).
    agreement: the candidate's agreement with the incumbent on shared live rows, None when they
      scored none in common.
    """

    model: str
    version: int
    author: str
    evaluated_at: str
    code_revision: str | None = None
    incumbent_version: int | None = None
    feed: SchemaCheck | None = None
    past_feeds: tuple[SchemaCheck, ...] = ()
    rollback: SchemaCheck | None = None
    output: SchemaCheck | None = None
    live_sample: SampleProfile | None = None
    feature_changes: tuple[FeatureChange, ...] = ()
    acknowledgements: tuple[Acknowledgement, ...] = ()
    comparisons: tuple[PairedComparison, ...] = ()
    slices: tuple[SliceComparison, ...] = ()
    containment: tuple[ContainmentEstimate, ...] = ()
    datasets: tuple[DatasetRecord, ...] = ()
    recalled_upstream: tuple[RecalledDataset, ...] = ()
    approvals: tuple[Approval, ...] = ()
    holds_top_stage: str | None = None
    feed_name: str | None = None
    feed_checks: tuple[FeedSchemaCheck, ...] = ()
    rollback_feed_checks: tuple[FeedSchemaCheck, ...] = ()
    consumer_checks: tuple[ConsumerCheck, ...] = ()
    agreement: ShadowAgreement | None = None

    @property
    def has_incumbent(self) -> bool:
        return self.incumbent_version is not None


def parse_time(text: str, *, place: str) -> datetime:
    """An ISO 8601 time as an aware datetime (a time without offset is taken as UTC)."""
    try:
        moment = datetime.fromisoformat(text)
    except (TypeError, ValueError):
        raise EvidenceError(f"not an ISO 8601 time: {text!r}", place=place) from None
    return moment if moment.tzinfo else moment.replace(tzinfo=UTC)
