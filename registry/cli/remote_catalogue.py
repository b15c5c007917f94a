"""The remote door of registry.cli.client: each method is one request to a server's API
(through registry.cli.remote.ApiClient), its document wrapped in the same answer the local door
gives. It imports nothing of the server (an import-linter contract in pyproject.toml).
"""

from __future__ import annotations

import json
from collections.abc import Iterator, Sequence
from pathlib import Path
from typing import Any
from urllib.parse import quote

from registry.cli import answers as a
from registry.cli.client import WHOEVER_HOLDS_IT, Progress, Waivers
from registry.cli.remote import UNSET, ApiClient
from registry.errors import UserError

SERVER_WAIT = 55  # seconds a status request is held open, within the server's 60


def _path(*parts: str) -> str:
    return "/" + "/".join(quote(part, safe="") for part in parts)


def _schema_body(text: str, place: str) -> Any:
    """The API takes a schema as a JSON value, so the text is parsed here."""
    try:
        return json.loads(text)
    except json.JSONDecodeError as error:
        raise UserError(f"not valid JSON: {error}", place=place) from None


class RemoteCatalogue:
    """`RemoteCatalogue(ApiClient(server, token))`: the token says who acts."""

    def __init__(self, api: ApiClient) -> None:
        self.api = api

    def _get(self, path: str) -> Any:
        return self.api.request("GET", path)[2]

    def _send(self, method: str, path: str, body: Any = UNSET) -> Any:
        return self.api.request(method, path, body={} if body is UNSET else body)[2]

    def ping(self) -> a.Ping:
        return a.Ping(self.api.ping())

    # --- models, versions and stages ---------------------------------------------------------

    def list_models(self) -> a.ModelList:
        return a.ModelList(self.api.list_models())

    def create_model(self, name: str, description: str = "") -> a.ModelSummary:
        return a.ModelSummary(self.api.create_model(name, description))

    def show_model(self, model: str) -> a.ModelDetail:
        return a.ModelDetail(self.api.show_model(model))

    def show_policy(self, model: str) -> a.PolicyShown:
        return a.PolicyShown(self.api.show_policy(model))

    def set_policy(self, model: str, policy_text: str, *, source: str) -> a.PolicyChange:
        return a.PolicyChange(self.api.set_policy(model, policy_text))

    def register(self, model: str, document: str, manifest: str,
                 features: str | None = None) -> a.Registration:
        return a.Registration(self.api.register(model, document, manifest, features))

    def check(self, model: str, version: int, stage: str, waivers: Waivers = ()) -> a.GateCheck:
        found = self.api.check(model, version, stage, waivers)
        report = found.get("report", found)
        return a.GateCheck({**report, "would_move": report["passed"]})

    def promote(self, model: str, version: int, stage: str, waivers: Waivers = (),
                expect_holder: int | None = WHOEVER_HOLDS_IT) -> a.StageMove:
        # Left out, the server reads the holder before it runs the gates, as the local door does.
        expected = UNSET if expect_holder is WHOEVER_HOLDS_IT else expect_holder
        return a.StageMove(self.api.promote(model, version, stage, waivers, expected))

    def approve(self, model: str, version: int, stage: str, note: str = "") -> a.Approval:
        return a.Approval(self.api.approve(model, version, stage, note))

    def rollback(self, model: str, stage: str, waivers: Waivers = ()) -> a.StageMove:
        return a.StageMove(self.api.rollback(model, stage, waivers))

    def retire(self, model: str, version: int, reason: str = "") -> a.Retirement:
        return a.Retirement(self.api.retire(model, version, reason))

    def status(self, model: str) -> a.StageStatus:
        return a.StageStatus(self.api.status(model))

    def watch_status(self, model: str) -> Iterator[a.StageStatus]:
        """One request held open at a time (`?wait=`) until the status changes."""
        document, etag = self.api.status_when_changed(model, None, 0)
        yield a.StageStatus(document or {})
        while True:
            changed, etag = self.api.status_when_changed(model, etag, SERVER_WAIT)
            if changed is not None:
                yield a.StageStatus(changed)

    def history(self, model: str) -> a.StageHistory:
        return a.StageHistory(self.api.history(model))

    def report(self, report_id: int) -> a.GateReportAnswer:
        return a.GateReportAnswer({"id": report_id, **self.api.report(report_id)})

    def document(self, model: str, *, version: int | None = None,
                 stage: str | None = None) -> a.DocumentDownload:
        chunks = self.api.stream(self.api.document_path(model, version=version, stage=stage))
        # The headers come with the first chunk: the SHA-256 as ETag, the size, and which
        # version a stage's holder is.
        headers, first = next(chunks, ({}, b""))
        found_version = int(headers.get("Lockkeeper-Version", version or 0)) or version

        def body() -> Iterator[bytes]:
            if first:
                yield first
            for _, chunk in chunks:
                yield chunk

        return a.DocumentDownload(model=model, version=found_version,
                                  sha256=headers.get("ETag", "").strip('"'),
                                  size=int(headers.get("Content-Length", "0")) or None,
                                  chunks=body())

    def release_envelope(self, model: str, stage: str) -> bytes:
        return self.api.release_envelope(model, stage)

    # --- datasets, evaluations, lineage --------------------------------------------------------

    def list_datasets(self) -> a.DatasetList:
        return a.DatasetList(self.api.list_datasets())

    def show_dataset(self, name: str) -> a.DatasetDetail:
        return a.DatasetDetail(self.api.show_dataset(name))

    def add_dataset(self, name: str, fingerprint: Any, sources: Sequence[Any], *, role: str,
                    derived_from: Sequence[str], feed_of: str | None,
                    source_uri: str) -> a.DatasetAdded:
        # Fingerprinted here, so only the fingerprint crosses the network.
        return a.DatasetAdded(self.api.add_dataset_fingerprint(
            name, fingerprint.to_dict(), role=role, derived_from=derived_from, feed_of=feed_of,
            source_uri=source_uri, sources=[source.to_dict() for source in sources]))

    def evaluate(self, model: str, version: int, dataset: str, predictions: str, *,
                 task: str | None, slices: Sequence[str], threshold: float) -> a.Evaluation:
        return a.Evaluation(self.api.evaluate(model, version, dataset, predictions, task=task,
                                              slices=slices, threshold=threshold))

    def lineage(self, node: str, direction: str, *, depth: int | None,
                output_format: str) -> a.LineageDocument:
        return a.LineageDocument(self.api.lineage(node, direction, depth=depth,
                                                  output_format=output_format))

    def recall(self, dataset: str, reason: str) -> a.Recall:
        return a.Recall(self.api.recall(dataset, reason))

    # --- after release -------------------------------------------------------------------------

    def record_served_batches(self, model: str, files: Sequence[str], *, schema: str | None,
                              file_format: str | None, progress: Progress = None
                              ) -> Iterator[a.ServedBatch]:
        for file in files:  # one request a batch, in turn
            answer = a.ServedBatch(self.api.record_served(model, file, schema=schema,
                                                          file_format=file_format))
            if progress is not None:
                progress(int(answer.document["rows"]))
            yield answer

    def record_outcomes(self, model: str, file: str, *,
                        file_format: str | None) -> a.OutcomeBatch:
        return a.OutcomeBatch(self.api.record_outcomes(model, file, file_format=file_format))

    def serving_report(self, model: str, *, version: int | None, since: str | None,
                       window: str | None) -> a.ServingReport:
        return a.ServingReport(self.api.serving_report(model, version=version, since=since,
                                                       window=window))

    # --- contracts -----------------------------------------------------------------------------

    def create_feed(self, name: str, *, description: str, retain_days: int,
                    built_from: Sequence[str]) -> a.Feed:
        return a.Feed(self._send("POST", "/feeds", {
            "name": name, "description": description, "retain_days": retain_days,
            "built_from": list(built_from)}))

    def publish_feed_schema(self, feed: str, schema_text: str, *, note: str,
                            waiver_reason: str | None, place: str) -> a.FeedPublication:
        body = {"schema": _schema_body(schema_text, place), "note": note}
        if waiver_reason is not None:
            body["waiver_reason"] = waiver_reason
        return a.FeedPublication(self._send("POST", _path("feeds", feed, "schemas"), body))

    def check_feed_schema(self, feed: str, schema_text: str, *, place: str) -> a.SchemaVerdict:
        return a.SchemaVerdict(self._send("POST", _path("feeds", feed, "check"),
                                          {"schema": _schema_body(schema_text, place)}))

    def show_feed(self, name: str) -> a.Feed:
        return a.Feed(self._get(_path("feeds", name)))

    def list_feeds(self) -> a.FeedList:
        return a.FeedList(self._get("/feeds"))

    def set_model_feed(self, model: str, feed: str) -> a.ModelFeed:
        return a.ModelFeed(self._send("PUT", _path("models", model, "feed"), {"feed": feed}))

    def add_consumer(self, name: str, model: str, schema_text: str, *, owner: str,
                     place: str) -> a.Consumer:
        return a.Consumer(self._send("POST", "/consumers", {
            "name": name, "model": model, "owner": owner,
            "schema": _schema_body(schema_text, place)}))

    def update_consumer(self, name: str, schema_text: str, *, note: str,
                        place: str) -> a.Consumer:
        return a.Consumer(self._send("POST", _path("consumers", name, "schemas"),
                                     {"schema": _schema_body(schema_text, place), "note": note}))

    def remove_consumer(self, name: str) -> a.Consumer:
        return a.Consumer(self.api.request("DELETE", _path("consumers", name))[2])

    def list_consumers(self) -> a.ConsumerList:
        return a.ConsumerList(self._get("/consumers"))

    def check_consumer_schema(self, name: str, schema_text: str, *,
                              place: str) -> a.SchemaVerdict:
        return a.SchemaVerdict(self._send("POST", _path("consumers", name, "check"),
                                          {"schema": _schema_body(schema_text, place)}))

    def impact(self, model: str, version: int, stage: str) -> a.Impact:
        return a.Impact(self._get(_path("models", model, "versions", str(version), "impact")
                                  + "?stage=" + quote(stage, safe="")))

    # --- people, tokens, keys, audit -----------------------------------------------------------

    def list_users(self) -> a.RoleList:
        return a.RoleList(self.api.list_users())

    def grant_role(self, user: str, role: str) -> a.RoleChange:
        return a.RoleChange(self.api.grant_role(user, role))

    def revoke_role(self, user: str, role: str) -> a.RoleChange:
        return a.RoleChange(self.api.revoke_role(user, role))

    def list_tokens(self) -> a.TokenList:
        return a.TokenList(self.api.list_tokens())

    def create_token(self, user: str, role: str, expires: str | None = None,
                     label: str = "") -> a.TokenCreated:
        return a.TokenCreated(self.api.create_token(user, role, expires, label))

    def revoke_token(self, token_id: int) -> a.TokenRecord:
        return a.TokenRecord(self.api.revoke_token(token_id))

    def list_keys(self) -> a.KeyList:
        return a.KeyList(self.api.list_keys())

    def verify_audit(self, against: Path | None = None) -> a.AuditVerdict:
        if against is not None:  # the checkpoint file is on this machine, not the server's
            raise UserError("`audit verify --against` works on a local catalogue only; drop "
                            "--server", place="--server")
        return a.AuditVerdict(self.api.verify_audit())
