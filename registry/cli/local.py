"""The local door of registry.cli.client: each method calls one use case of registry.service on
a catalogue opened on first use, acting as the user named by --as.

The service modules are imported inside the methods: importing them loads the database layer,
and only the command that runs should pay for what it uses.
"""

from __future__ import annotations

import time
from collections.abc import Callable, Iterator, Sequence
from pathlib import Path
from typing import TYPE_CHECKING, Any

from registry.cli import answers as a
from registry.cli.client import WHOEVER_HOLDS_IT, Progress, Waivers
from registry.cli.files import read_file_bytes, read_file_text
from registry.plain import to_plain

if TYPE_CHECKING:
    from registry.service.actors import Actor
    from registry.service.contents import RegistrationRequest
    from registry.store.catalogue import Catalogue

POLL_INTERVAL = 0.25  # seconds between looks at the audit head while watching a status


def _plain(value: Any) -> dict[str, Any]:
    return to_plain(value)


class LocalCatalogue:
    """`LocalCatalogue(open_catalogue, user)`: `open_catalogue()` opens (once) the catalogue."""

    def __init__(self, open_catalogue: Callable[[], Catalogue], user: str) -> None:
        self._open = open_catalogue
        self.user = user

    @property
    def catalogue(self) -> Catalogue:
        return self._open()

    def actor(self) -> Actor:
        from registry.service.roles import load_actor

        return load_actor(self.catalogue, self.user)

    def ping(self) -> a.Ping:
        self.catalogue  # noqa: B018 - opening it is the check
        return a.Ping({"service": "lockkeeper", "ok": True})

    # --- models, versions and stages ---------------------------------------------------------

    def list_models(self) -> a.ModelList:
        from registry.service import models

        return a.ModelList(_plain({"models": models.list_models(self.catalogue)}))

    def create_model(self, name: str, description: str = "") -> a.ModelSummary:
        from registry.service import models

        return a.ModelSummary(_plain(models.create_model(self.catalogue, name, description,
                                                         self.actor())))

    def show_model(self, model: str) -> a.ModelDetail:
        from registry.service import models

        return a.ModelDetail(_plain(models.show_model(self.catalogue, model)))

    def show_policy(self, model: str) -> a.PolicyShown:
        from registry.service.policies import show_policy

        return a.PolicyShown(_plain(show_policy(self.catalogue, model)))

    def set_policy(self, model: str, policy_text: str, *, source: str) -> a.PolicyChange:
        from registry.service.policies import set_policy

        return a.PolicyChange(_plain(set_policy(self.catalogue, model, policy_text, self.actor(),
                                                source=source)))

    def register(self, model: str, document: str, manifest: str,
                 features: str | None = None) -> a.Registration:
        from registry.service import registration

        request = registration_request(model, document, manifest, features)
        return a.Registration(_plain(registration.register_version(self.catalogue, request,
                                                                   self.actor())))

    def _waivers(self, waivers: Waivers, actor: Actor) -> list:
        from registry.service import gatekeeping

        return gatekeeping.parse_waivers(list(waivers), actor) if waivers else []

    def check(self, model: str, version: int, stage: str, waivers: Waivers = ()) -> a.GateCheck:
        from registry.service import stages

        actor = self.actor()
        report = _plain(stages.check(self.catalogue, model, version, stage, actor,
                                     self._waivers(waivers, actor)).report)
        return a.GateCheck({**report, "would_move": report["passed"]})

    def promote(self, model: str, version: int, stage: str, waivers: Waivers = (),
                expect_holder: int | None = WHOEVER_HOLDS_IT) -> a.StageMove:
        from registry.service import stages

        catalogue, actor = self.catalogue, self.actor()
        parsed = self._waivers(waivers, actor)
        # The holder is read before the gates run, so a move made meanwhile by someone else
        # turns this one into a conflict instead of displacing what they put there.
        if expect_holder is WHOEVER_HOLDS_IT:
            expected = stages.snapshot(catalogue, model, stage)
        else:
            expected = stages.HolderSnapshot(stage, () if expect_holder is None
                                             else (expect_holder,))
        return a.StageMove(_plain(stages.promote(catalogue, model, version, stage, actor, parsed,
                                                 expected)))

    def approve(self, model: str, version: int, stage: str, note: str = "") -> a.Approval:
        from registry.service import stages

        return a.Approval(_plain(stages.approve(self.catalogue, model, version, stage,
                                                self.actor(), note)))

    def rollback(self, model: str, stage: str, waivers: Waivers = ()) -> a.StageMove:
        from registry.service import stages

        actor = self.actor()
        return a.StageMove(_plain(stages.rollback(self.catalogue, model, stage, actor,
                                                  self._waivers(waivers, actor))))

    def retire(self, model: str, version: int, reason: str = "") -> a.Retirement:
        from registry.service import stages

        return a.Retirement(_plain(stages.retire(self.catalogue, model, version, self.actor(),
                                                 reason)))

    def status(self, model: str) -> a.StageStatus:
        from registry.service import stages

        return a.StageStatus(_plain(stages.status(self.catalogue, model)))

    def watch_status(self, model: str) -> Iterator[a.StageStatus]:
        """Reads the audit head a few times a second (every change moves it) and the status
        only when the head moved."""
        from registry.service.cached_reads import CachedReads

        reads = CachedReads(self.catalogue)
        try:
            seen_at = reads.generation()
            yield self.status(model)
            while True:
                time.sleep(POLL_INTERVAL)
                head = reads.generation()
                if head != seen_at:
                    seen_at = head
                    yield self.status(model)
        finally:
            reads.close()

    def history(self, model: str) -> a.StageHistory:
        from registry.service import stages

        return a.StageHistory(_plain(stages.history(self.catalogue, model)))

    def report(self, report_id: int) -> a.GateReportAnswer:
        from registry.service.stages import find_report

        return a.GateReportAnswer({"id": report_id,
                                   **_plain(find_report(self.catalogue, report_id))})

    def document(self, model: str, *, version: int | None = None,
                 stage: str | None = None) -> a.DocumentDownload:
        from registry.service.document_fetch import document_chunks, find_document

        found = find_document(self.catalogue, model, version=version, stage=stage)
        return a.DocumentDownload(model=model, version=found.version, sha256=found.sha256,
                                  size=found.size, chunks=document_chunks(self.catalogue, found))

    def release_envelope(self, model: str, stage: str) -> bytes:
        from registry.service.releases import current_release

        return current_release(self.catalogue, model, stage).envelope

    # --- datasets, evaluations, lineage --------------------------------------------------------

    def list_datasets(self) -> a.DatasetList:
        from registry.service.datasets import list_datasets

        return a.DatasetList(_plain({"datasets": list_datasets(self.catalogue)}))

    def show_dataset(self, name: str) -> a.DatasetDetail:
        from registry.service.datasets import fingerprint_of, show_dataset

        return a.DatasetDetail(_plain(show_dataset(self.catalogue, name)),
                               fingerprint=fingerprint_of(self.catalogue, name).to_dict())

    def add_dataset(self, name: str, fingerprint: Any, sources: Sequence[Any], *, role: str,
                    derived_from: Sequence[str], feed_of: str | None,
                    source_uri: str) -> a.DatasetAdded:
        from registry.service.datasets import DatasetRequest, add_dataset

        request = DatasetRequest(name=name, role=role, fingerprint=fingerprint,
                                 source_uri=source_uri, derived_from=tuple(derived_from),
                                 feed_of=feed_of,
                                 sources=tuple((s.relative_path, s.size, s.sha256)
                                               for s in sources))
        return a.DatasetAdded(_plain(add_dataset(self.catalogue, request, self.actor())))

    def evaluate(self, model: str, version: int, dataset: str, predictions: str, *,
                 task: str | None, slices: Sequence[str], threshold: float) -> a.Evaluation:
        from registry.evaluation import read_predictions
        from registry.evaluation.predictions import infer_task
        from registry.service.evaluations import EvaluationRequest, add_evaluation

        read = read_predictions(predictions,
                                task or infer_task(predictions, place="--predictions"))
        request = EvaluationRequest(model=model, version=version, dataset=dataset,
                                    predictions=read, slice_columns=tuple(slices),
                                    threshold=threshold)
        return a.Evaluation(_plain(add_evaluation(self.catalogue, request, self.actor())))

    def lineage(self, node: str, direction: str, *, depth: int | None,
                output_format: str) -> a.LineageDocument:
        from registry.service import lineage

        if output_format == "prov-json":
            return a.LineageDocument(_plain(lineage.provenance_of(self.catalogue, node,
                                                                  direction, depth)))
        return a.LineageDocument(_plain(lineage.lineage_of(self.catalogue, node, direction,
                                                           depth)))

    def recall(self, dataset: str, reason: str) -> a.Recall:
        from registry.service.recall import recall_dataset

        return a.Recall(_plain(recall_dataset(self.catalogue, dataset, reason, self.actor())))

    # --- after release -------------------------------------------------------------------------

    def record_served_batches(self, model: str, files: Sequence[str], *, schema: str | None,
                              file_format: str | None, progress: Progress = None
                              ) -> Iterator[a.ServedBatch]:
        from registry.cli.dataset_commands import load_schema
        from registry.service.serving import record_served_batches

        for document in record_served_batches(self.catalogue, model, files, self.actor(),
                                              format=file_format, schema_json=load_schema(schema),
                                              progress=progress):
            yield a.ServedBatch(_plain(document))

    def record_outcomes(self, model: str, file: str, *,
                        file_format: str | None) -> a.OutcomeBatch:
        from registry.service.serving import record_outcomes

        return a.OutcomeBatch(_plain(record_outcomes(self.catalogue, model, file, self.actor(),
                                                     format=file_format)))

    def serving_report(self, model: str, *, version: int | None, since: str | None,
                       window: str | None) -> a.ServingReport:
        from registry.service.serving_reports import serving_report

        return a.ServingReport(_plain(serving_report(self.catalogue, model, version=version,
                                                     since=since, window=window)))

    # --- contracts -----------------------------------------------------------------------------

    def create_feed(self, name: str, *, description: str, retain_days: int,
                    built_from: Sequence[str]) -> a.Feed:
        from registry.service.feeds import create_feed

        return a.Feed(_plain(create_feed(self.catalogue, name, self.actor(),
                                         description=description, retain_days=retain_days,
                                         built_from=built_from)))

    def publish_feed_schema(self, feed: str, schema_text: str, *, note: str,
                            waiver_reason: str | None, place: str) -> a.FeedPublication:
        from registry.service.feeds import publish_feed_schema

        return a.FeedPublication(_plain(publish_feed_schema(
            self.catalogue, feed, schema_text, self.actor(), note=note,
            waiver_reason=waiver_reason, place=place)))

    def check_feed_schema(self, feed: str, schema_text: str, *, place: str) -> a.SchemaVerdict:
        from registry.service.feeds import check_feed_schema

        return a.SchemaVerdict(_plain(check_feed_schema(self.catalogue, feed, schema_text,
                                                        place=place)))

    def show_feed(self, name: str) -> a.Feed:
        from registry.service.feeds import show_feed

        return a.Feed(_plain(show_feed(self.catalogue, name)))

    def list_feeds(self) -> a.FeedList:
        from registry.service.feeds import list_feeds

        return a.FeedList(_plain(list_feeds(self.catalogue)))

    def set_model_feed(self, model: str, feed: str) -> a.ModelFeed:
        from registry.service.feeds import set_model_feed

        return a.ModelFeed(_plain(set_model_feed(self.catalogue, model, feed, self.actor())))

    def add_consumer(self, name: str, model: str, schema_text: str, *, owner: str,
                     place: str) -> a.Consumer:
        from registry.service.consumers import add_consumer

        return a.Consumer(_plain(add_consumer(self.catalogue, name, model, schema_text,
                                              self.actor(), owner=owner, place=place)))

    def update_consumer(self, name: str, schema_text: str, *, note: str,
                        place: str) -> a.Consumer:
        from registry.service.consumers import update_consumer

        return a.Consumer(_plain(update_consumer(self.catalogue, name, schema_text, self.actor(),
                                                 note=note, place=place)))

    def remove_consumer(self, name: str) -> a.Consumer:
        from registry.service.consumers import remove_consumer

        return a.Consumer(_plain(remove_consumer(self.catalogue, name, self.actor())))

    def list_consumers(self) -> a.ConsumerList:
        from registry.service.consumers import list_consumers

        return a.ConsumerList(_plain(list_consumers(self.catalogue)))

    def check_consumer_schema(self, name: str, schema_text: str, *,
                              place: str) -> a.SchemaVerdict:
        from registry.service.consumers import check_consumer_schema

        return a.SchemaVerdict(_plain(check_consumer_schema(self.catalogue, name, schema_text,
                                                            place=place)))

    def impact(self, model: str, version: int, stage: str) -> a.Impact:
        from registry.service.impact import impact_of

        return a.Impact(_plain(impact_of(self.catalogue, model, version, stage)))

    # --- people, tokens, keys, audit -----------------------------------------------------------

    def list_users(self) -> a.RoleList:
        from registry.service.roles import list_roles

        return a.RoleList(_plain({"users": list_roles(self.catalogue)}))

    def grant_role(self, user: str, role: str) -> a.RoleChange:
        from registry.service.roles import grant_role

        return a.RoleChange(_plain(grant_role(self.catalogue, user, role, self.actor())))

    def revoke_role(self, user: str, role: str) -> a.RoleChange:
        from registry.service.roles import revoke_role

        return a.RoleChange(_plain(revoke_role(self.catalogue, user, role, self.actor())))

    def list_tokens(self) -> a.TokenList:
        from registry.service import tokens

        return a.TokenList(_plain({"tokens": tokens.list_tokens(self.catalogue, self.actor())}))

    def create_token(self, user: str, role: str, expires: str | None = None,
                     label: str = "") -> a.TokenCreated:
        from registry.service import tokens

        return a.TokenCreated(_plain(tokens.create_token(
            self.catalogue, user, role, self.actor(), expires_at=tokens.parse_expiry(expires),
            label=label)))

    def revoke_token(self, token_id: int) -> a.TokenRecord:
        from registry.service import tokens

        return a.TokenRecord(_plain(tokens.revoke_token(self.catalogue, token_id, self.actor())))

    def list_keys(self) -> a.KeyList:
        from registry.service.signing_keys import list_keys

        return a.KeyList(_plain(list_keys(self.catalogue)))

    def verify_audit(self, against: Path | None = None) -> a.AuditVerdict:
        from registry.service import integrity

        checkpoint = integrity.read_external_checkpoint(against) if against else None
        return a.AuditVerdict(_plain(integrity.verify_catalogue(self.catalogue,
                                                                checkpoint).to_dict()))


def registration_request(model_name: str, document: str, manifest_path: str,
                         features_path: str | None) -> RegistrationRequest:
    """Read every file a registration names; paths in the manifest are relative to it."""
    from registry.manifest import parse_manifest
    from registry.service import registration

    manifest_text = read_file_text(manifest_path, "--manifest")
    document_bytes = read_file_bytes(document, "DOCUMENT")
    manifest = parse_manifest(manifest_text, source=manifest_path)
    base = Path(manifest_path).parent

    def named(relative: str | None, what: str) -> str | None:
        return read_file_text(str(base / relative), what) if relative else None

    features_text = (read_file_text(features_path, "--features") if features_path
                     else named(manifest.features, "features"))
    return registration.RegistrationRequest(
        model=model_name, document=document_bytes, document_name=Path(document).name,
        manifest=manifest,
        input_schema_text=named(manifest.input_schema, "input_schema"),
        output_schema_text=named(manifest.output_schema, "output_schema"),
        features_text=features_text)
