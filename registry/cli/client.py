"""The one interface the commands talk to: every operation on a catalogue a command needs.

Two doors implement it, returning the same answers (registry.cli.answers):
registry.cli.local.LocalCatalogue calls the use cases on a catalogue opened here, and
registry.cli.remote_catalogue.RemoteCatalogue asks a server over HTTP. A command parses its
arguments, calls one method of `CommandContext.client()` and renders the answer; it never asks
which door it has.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator, Sequence
from pathlib import Path
from typing import Any, Protocol

from registry.cli.answers import (
    Approval,
    AuditVerdict,
    Consumer,
    ConsumerList,
    DatasetAdded,
    DatasetDetail,
    DatasetList,
    DocumentDownload,
    Evaluation,
    Feed,
    FeedList,
    FeedPublication,
    GateCheck,
    GateReportAnswer,
    Impact,
    KeyList,
    LineageDocument,
    ModelDetail,
    ModelFeed,
    ModelList,
    ModelSummary,
    OutcomeBatch,
    Ping,
    PolicyChange,
    PolicyShown,
    Recall,
    Registration,
    Retirement,
    RoleChange,
    RoleList,
    SchemaVerdict,
    ServedBatch,
    ServingReport,
    StageHistory,
    StageMove,
    StageStatus,
    TokenCreated,
    TokenList,
    TokenRecord,
)

Waivers = Sequence[tuple[str, str]]
"""(gate, reason) pairs, already checked by the command (registry.cli.stage_commands)."""

Progress = Callable[[int], None] | None


class _Whoever:
    """`expect_holder` left out: whoever holds the stage when the command starts."""

    def __repr__(self) -> str:
        return "WHOEVER_HOLDS_IT"


WHOEVER_HOLDS_IT: Any = _Whoever()


class CatalogueClient(Protocol):
    """Every operation the catalogue commands need, one use case each."""

    def ping(self) -> Ping: ...

    # --- models, versions and stages ---------------------------------------------------------

    def list_models(self) -> ModelList: ...

    def create_model(self, name: str, description: str = "") -> ModelSummary: ...

    def show_model(self, model: str) -> ModelDetail: ...

    def show_policy(self, model: str) -> PolicyShown: ...

    def set_policy(self, model: str, policy_text: str, *, source: str) -> PolicyChange: ...

    def register(self, model: str, document: str, manifest: str,
                 features: str | None = None) -> Registration: ...

    def check(self, model: str, version: int, stage: str, waivers: Waivers = ()) -> GateCheck:
        ...

    def promote(self, model: str, version: int, stage: str, waivers: Waivers = (),
                expect_holder: int | None = WHOEVER_HOLDS_IT) -> StageMove: ...

    def approve(self, model: str, version: int, stage: str, note: str = "") -> Approval: ...

    def rollback(self, model: str, stage: str, waivers: Waivers = ()) -> StageMove: ...

    def retire(self, model: str, version: int, reason: str = "") -> Retirement: ...

    def status(self, model: str) -> StageStatus: ...

    def watch_status(self, model: str) -> Iterator[StageStatus]:
        """The status now, then again each time something in the catalogue changed."""
        ...

    def history(self, model: str) -> StageHistory: ...

    def report(self, report_id: int) -> GateReportAnswer: ...

    def document(self, model: str, *, version: int | None = None,
                 stage: str | None = None) -> DocumentDownload: ...

    def release_envelope(self, model: str, stage: str) -> bytes:
        """The current release statement of a stage: the DSSE envelope's exact bytes."""
        ...

    # --- datasets, evaluations, lineage --------------------------------------------------------

    def list_datasets(self) -> DatasetList: ...

    def show_dataset(self, name: str) -> DatasetDetail: ...

    def add_dataset(self, name: str, fingerprint: Any, sources: Sequence[Any], *, role: str,
                    derived_from: Sequence[str], feed_of: str | None,
                    source_uri: str) -> DatasetAdded:
        """Register a dataset fingerprinted here (registry.datasets), with its files."""
        ...

    def evaluate(self, model: str, version: int, dataset: str, predictions: str, *,
                 task: str | None, slices: Sequence[str], threshold: float) -> Evaluation: ...

    def lineage(self, node: str, direction: str, *, depth: int | None,
                output_format: str) -> LineageDocument: ...

    def recall(self, dataset: str, reason: str) -> Recall: ...

    # --- after release -------------------------------------------------------------------------

    def record_served_batches(self, model: str, files: Sequence[str], *, schema: str | None,
                              file_format: str | None, progress: Progress = None
                              ) -> Iterator[ServedBatch]:
        """Each file recorded in turn as its own batch, each answer as it is kept; a refused
        file raises and ends the run (the files before it stay recorded)."""
        ...

    def record_outcomes(self, model: str, file: str, *,
                        file_format: str | None) -> OutcomeBatch: ...

    def serving_report(self, model: str, *, version: int | None, since: str | None,
                       window: str | None) -> ServingReport: ...

    # --- contracts -----------------------------------------------------------------------------

    def create_feed(self, name: str, *, description: str, retain_days: int,
                    built_from: Sequence[str]) -> Feed: ...

    def publish_feed_schema(self, feed: str, schema_text: str, *, note: str,
                            waiver_reason: str | None, place: str) -> FeedPublication: ...

    def check_feed_schema(self, feed: str, schema_text: str, *, place: str) -> SchemaVerdict:
        ...

    def show_feed(self, name: str) -> Feed: ...

    def list_feeds(self) -> FeedList: ...

    def set_model_feed(self, model: str, feed: str) -> ModelFeed: ...

    def add_consumer(self, name: str, model: str, schema_text: str, *, owner: str,
                     place: str) -> Consumer: ...

    def update_consumer(self, name: str, schema_text: str, *, note: str,
                        place: str) -> Consumer: ...

    def remove_consumer(self, name: str) -> Consumer: ...

    def list_consumers(self) -> ConsumerList: ...

    def check_consumer_schema(self, name: str, schema_text: str, *,
                              place: str) -> SchemaVerdict: ...

    def impact(self, model: str, version: int, stage: str) -> Impact: ...

    # --- people, tokens, keys, audit -----------------------------------------------------------

    def list_users(self) -> RoleList: ...

    def grant_role(self, user: str, role: str) -> RoleChange: ...

    def revoke_role(self, user: str, role: str) -> RoleChange: ...

    def list_tokens(self) -> TokenList: ...

    def create_token(self, user: str, role: str, expires: str | None = None,
                     label: str = "") -> TokenCreated: ...

    def revoke_token(self, token_id: int) -> TokenRecord: ...

    def list_keys(self) -> KeyList: ...

    def verify_audit(self, against: Path | None = None) -> AuditVerdict:
        """The audit chain verified; `against` a checkpoint kept elsewhere (local door only)."""
        ...
