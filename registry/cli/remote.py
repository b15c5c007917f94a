"""A small HTTP client for the API (standard library only), one method per use case: the wire
beneath registry.cli.remote_catalogue, which turns its documents into answers.

Each method returns the JSON document the API returns; a problem document comes back as the
matching error of registry.errors (NotFound, Forbidden, Conflict ...), so a shell renders a
remote failure exactly as a local one.
"""

from __future__ import annotations

import json
import secrets
import urllib.error
import urllib.parse
import urllib.request
from collections.abc import Iterable, Iterator, Sequence
from pathlib import Path, PurePosixPath
from typing import Any

from registry.errors import (
    AlreadyExists,
    CatalogueUnavailable,
    Conflict,
    Forbidden,
    LockkeeperError,
    NotFound,
    Refusal,
    StageNotHeld,
    Unauthenticated,
    Unprocessable,
    UserError,
)
from registry.manifest import parse_manifest

ERRORS_BY_KIND: dict[str, type[LockkeeperError]] = {
    "not-found": NotFound, "stage-not-held": StageNotHeld, "already-exists": AlreadyExists,
    "forbidden": Forbidden,
    "conflict": Conflict, "refused": Refusal, "invalid-content": Unprocessable,
    "invalid-schema": Unprocessable, "unauthenticated": Unauthenticated,
    "catalogue-unavailable": CatalogueUnavailable,
}
UNSET: Any = object()
Waivers = Iterable[tuple[str, str]]


class RemoteError(UserError):
    """A problem document whose kind has no class of its own here (413, 415, ...)."""

    def __init__(self, message: str, *, kind: str, status: int, place: str | None) -> None:
        super().__init__(message, place=place)
        self.kind = kind
        self.http_status = status


def error_from_problem(status: int, document: dict[str, Any]) -> LockkeeperError:
    kind = str(document.get("type", "")).rsplit("/", 1)[-1] or "bad-input"
    detail = str(document.get("detail") or document.get("title") or f"HTTP {status}")
    place = document.get("place")
    known = ERRORS_BY_KIND.get(kind)
    if known is not None:
        return known(detail, place=place)
    return RemoteError(detail, kind=kind, status=status, place=place)


def _quoted(text: str) -> str:
    return text.replace("\\", "\\\\").replace('"', '\\"').replace("\r", "").replace("\n", "")


def encode_multipart(parts: Sequence[tuple[str, str, bytes]],
                     fields: Sequence[tuple[str, str]] = ()) -> tuple[bytes, str]:
    """multipart/form-data (RFC 7578) from (name, file name, content) files and (name, text)
    fields."""
    boundary = "lockkeeper-" + secrets.token_hex(16)
    chunks = []
    for name, text in fields:
        chunks.append(f'--{boundary}\r\nContent-Disposition: form-data; name="{_quoted(name)}"'
                      f"\r\n\r\n{text}\r\n".encode())
    for name, filename, content in parts:
        chunks.append(f'--{boundary}\r\nContent-Disposition: form-data; name="{_quoted(name)}"; '
                      f'filename="{_quoted(filename)}"\r\nContent-Type: application/octet-stream'
                      "\r\n\r\n".encode())
        chunks.append(content)
        chunks.append(b"\r\n")
    chunks.append(f"--{boundary}--\r\n".encode("ascii"))
    return b"".join(chunks), f"multipart/form-data; boundary={boundary}"


def _read(path: str | Path, what: str) -> bytes:
    try:
        return Path(path).read_bytes()
    except OSError as error:
        raise UserError(f"cannot read {path}: {error.strerror or error}", place=what) from None


def registration_parts(document: str | Path, manifest: str | Path,
                       features: str | Path | None = None) -> list[tuple[str, str, bytes]]:
    """The upload `lockkeeper register` would make of these files: the files the manifest
    names travel under the relative paths it gives."""
    manifest_bytes = _read(manifest, "--manifest")
    try:
        parsed = parse_manifest(manifest_bytes.decode("utf-8"), source=str(manifest))
    except UnicodeDecodeError:
        raise UserError("the manifest is not UTF-8 text", place="--manifest") from None
    base = Path(manifest).parent
    parts = [("document", Path(document).name, _read(document, "DOCUMENT")),
             ("manifest", Path(manifest).name, manifest_bytes)]
    for what, relative in (("input_schema", parsed.input_schema),
                           ("output_schema", parsed.output_schema),
                           ("features", None if features else parsed.features)):
        if relative:
            parts.append((relative, PurePosixPath(relative).name, _read(base / relative, what)))
    if features:
        parts.append(("features", Path(features).name, _read(features, "--features")))
    return parts


class ApiClient:
    """`ApiClient("http://127.0.0.1:8080", token)`; every call is one request."""

    def __init__(self, server: str, token: str | None = None, *, timeout: float = 30.0) -> None:
        self.base = server.rstrip("/") + "/api/v1"
        self.token = token
        self.timeout = timeout

    # --- transport -------------------------------------------------------------------------

    def request(self, method: str, path: str, *, body: Any = UNSET, data: bytes | None = None,
                content_type: str | None = None, headers: dict[str, str] | None = None
                ) -> tuple[int, dict[str, str], Any]:
        sent = dict(headers or {})
        if body is not UNSET:
            data = json.dumps(body).encode("utf-8")
            content_type = "application/json"
        if content_type:
            sent["Content-Type"] = content_type
        with self._open(method, path, data=data, headers=sent) as response:
            status = response.status
            return status, dict(response.headers), (None if status == 304
                                                     else _json(response.read()))

    def stream(self, path: str, *, headers: dict[str, str] | None = None,
               chunk_size: int = 1024 * 1024) -> Iterator[tuple[dict[str, str], bytes]]:
        """GET `path` and yield (response headers, chunk) as the body arrives, never holding
        it whole; a problem document comes back as its typed error."""
        with self._open("GET", path, headers=headers) as response:
            received = dict(response.headers)
            try:
                while chunk := response.read(chunk_size):
                    yield received, chunk
            except OSError as error:
                raise CatalogueUnavailable(f"the server at {self.base} broke off: {error}",
                                           place="--server") from None

    def _open(self, method: str, path: str, *, data: bytes | None = None,
              headers: dict[str, str] | None = None) -> Any:
        """The response, open: a 2xx or a 304 (an HTTPError is a response too); any other
        status raises the typed error of its problem document."""
        sent = dict(headers or {})
        if self.token:
            sent["Authorization"] = f"Bearer {self.token}"
        request = urllib.request.Request(self.base + path, data=data, method=method,
                                         headers=sent)
        try:
            return urllib.request.urlopen(request, timeout=self.timeout)
        except urllib.error.HTTPError as error:
            if error.code == 304:
                return error
            with error:
                document = _json(error.read())
            if isinstance(document, dict) and "type" in document:
                raise error_from_problem(error.code, document) from None
            raise RemoteError(f"HTTP {error.code} from {self.base}", kind="bad-input",
                              status=error.code, place=path) from None
        except (urllib.error.URLError, OSError) as error:
            reason = getattr(error, "reason", error)
            raise CatalogueUnavailable(f"cannot reach the server at {self.base}: {reason}",
                                       place="--server") from None

    def _get(self, path: str) -> Any:
        return self.request("GET", path)[2]

    def _post(self, path: str, body: Any = UNSET) -> Any:
        return self.request("POST", path, body={} if body is UNSET else body)[2]

    # --- models ----------------------------------------------------------------------------

    def ping(self) -> dict:
        return self._get("/ping")

    def list_models(self) -> dict:
        return self._get("/models")

    def create_model(self, name: str, description: str = "") -> dict:
        return self._post("/models", {"name": name, "description": description})

    def show_model(self, model: str) -> dict:
        return self._get(f"/models/{_quote(model)}")

    def show_policy(self, model: str) -> dict:
        return self._get(f"/models/{_quote(model)}/policy")

    def set_policy(self, model: str, policy_text: str) -> dict:
        return self.request("PUT", f"/models/{_quote(model)}/policy",
                            body={"policy": policy_text})[2]

    def status(self, model: str) -> dict:
        return self._get(f"/models/{_quote(model)}/status")

    def history(self, model: str) -> dict:
        return self._get(f"/models/{_quote(model)}/history")

    # --- versions and stages ---------------------------------------------------------------

    def register(self, model: str, document: str | Path, manifest: str | Path,
                 features: str | Path | None = None) -> dict:
        data, content_type = encode_multipart(registration_parts(document, manifest, features))
        return self.request("POST", f"/models/{_quote(model)}/versions", data=data,
                            content_type=content_type)[2]

    def check(self, model: str, version: int, stage: str, waivers: Waivers = ()) -> dict:
        return self._post(f"/models/{_quote(model)}/versions/{int(version)}/check",
                          {"stage": stage, "waivers": _waivers(waivers)})

    def promote(self, model: str, version: int, stage: str, waivers: Waivers = (),
                expect_holder: int | None = UNSET) -> dict:
        body: dict[str, Any] = {"stage": stage, "waivers": _waivers(waivers)}
        if expect_holder is not UNSET:
            body["expect_holder"] = expect_holder
        return self._post(f"/models/{_quote(model)}/versions/{int(version)}/promote", body)

    def approve(self, model: str, version: int, stage: str, note: str = "") -> dict:
        return self._post(f"/models/{_quote(model)}/versions/{int(version)}/approve",
                          {"stage": stage, "note": note})

    def rollback(self, model: str, stage: str = "live", waivers: Waivers = ()) -> dict:
        return self._post(f"/models/{_quote(model)}/stages/{_quote(stage)}/rollback",
                          {"waivers": _waivers(waivers)})

    def retire(self, model: str, version: int, reason: str = "") -> dict:
        return self._post(f"/models/{_quote(model)}/versions/{int(version)}/retire",
                          {"reason": reason})

    def stage_holder(self, model: str, stage: str, *, etag: str | None = None
                     ) -> tuple[dict | None, str | None]:
        """The holder of a stage and its ETag; (None, etag) when unchanged since `etag`."""
        headers = {"If-None-Match": etag} if etag else None
        status, response_headers, document = self.request(
            "GET", f"/models/{_quote(model)}/stages/{_quote(stage)}", headers=headers)
        return (None if status == 304 else document), response_headers.get("ETag")

    def status_when_changed(self, model: str, etag: str | None, wait: float
                            ) -> tuple[dict | None, str | None]:
        """The model's status once it differs from `etag` (held up to `wait` seconds by the
        server); (None, etag) when nothing changed meanwhile."""
        headers = {"If-None-Match": etag} if etag else None
        status, response_headers, document = self.request(
            "GET", f"/models/{_quote(model)}/status?wait={wait:g}", headers=headers)
        return (None if status == 304 else document), response_headers.get("ETag")

    def document_path(self, model: str, *, version: int | None = None,
                      stage: str | None = None) -> str:
        if version is not None:
            return f"/models/{_quote(model)}/versions/{int(version)}/document"
        return f"/models/{_quote(model)}/stages/{_quote(stage or '')}/document"

    def release_envelope(self, model: str, stage: str) -> bytes:
        """The current release statement of a stage: the envelope's exact bytes."""
        return b"".join(chunk for _, chunk in
                        self.stream(f"/models/{_quote(model)}/stages/{_quote(stage)}/release"))

    def report(self, report_id: int) -> dict:
        return self._get(f"/reports/{int(report_id)}")

    # --- datasets and evaluations -----------------------------------------------------------

    def list_datasets(self) -> dict:
        return self._get("/datasets")

    def show_dataset(self, name: str) -> dict:
        return self._get(f"/datasets/{_quote(name)}")

    def add_dataset_fingerprint(self, name: str, fingerprint: dict, *, role: str = "source",
                                derived_from: Sequence[str] = (), feed_of: str | None = None,
                                source_uri: str = "", sources: Sequence[dict] = ()) -> dict:
        """Register a dataset from a fingerprint computed here (`dataset fingerprint --json`),
        with the files it was made from ({"path", "size", "sha256"} each)."""
        body: dict[str, Any] = {"name": name, "fingerprint": fingerprint, "role": role,
                                "derived_from": list(derived_from), "feed_of": feed_of,
                                "source_uri": source_uri}
        if sources:
            body["sources"] = list(sources)
        return self._post("/datasets", body)

    def add_dataset_file(self, name: str, file: str | Path, *, schema: str | Path | None = None,
                         role: str = "source", file_format: str | None = None,
                         keys: Sequence[str] = (), exclude: Sequence[str] = (),
                         derived_from: Sequence[str] = (), feed_of: str | None = None,
                         source_uri: str | None = None) -> dict:
        """Upload a dataset file; the server fingerprints it."""
        fields = [("name", name), ("role", role)]
        fields += [("key", key) for key in keys] + [("exclude", column) for column in exclude]
        fields += [("derived_from", parent) for parent in derived_from]
        for field_name, value in (("format", file_format), ("feed_of", feed_of),
                                  ("source_uri", source_uri)):
            if value:
                fields.append((field_name, value))
        files = [("file", Path(file).name, _read(file, "FILE"))]
        if schema is not None:
            files.append(("schema", Path(schema).name, _read(schema, "--schema")))
        data, content_type = encode_multipart(files, fields)
        return self.request("POST", "/datasets", data=data, content_type=content_type)[2]

    def evaluate(self, model: str, version: int, dataset: str, predictions: str | Path, *,
                 task: str | None = None, slices: Sequence[str] = (),
                 threshold: float | None = None) -> dict:
        fields = [("dataset", dataset)] + [("slice", column) for column in slices]
        if task:
            fields.append(("task", task))
        if threshold is not None:
            fields.append(("threshold", repr(float(threshold))))
        data, content_type = encode_multipart(
            [("predictions", Path(predictions).name, _read(predictions, "--predictions"))], fields)
        return self.request("POST", f"/models/{_quote(model)}/versions/{int(version)}/evaluations",
                            data=data, content_type=content_type)[2]

    def record_served(self, model: str, file: str | Path, *, schema: str | Path | None = None,
                      file_format: str | None = None) -> dict:
        """Send a served batch back to the catalogue."""
        files = [("file", Path(file).name, _read(file, "FILE"))]
        if schema is not None:
            files.append(("schema", Path(schema).name, _read(schema, "--schema")))
        fields = [("format", file_format)] if file_format else []
        data, content_type = encode_multipart(files, fields)
        return self.request("POST", f"/models/{_quote(model)}/served", data=data,
                            content_type=content_type)[2]

    def record_outcomes(self, model: str, file: str | Path, *,
                        file_format: str | None = None) -> dict:
        fields = [("format", file_format)] if file_format else []
        data, content_type = encode_multipart([("file", Path(file).name, _read(file, "FILE"))],
                                              fields)
        return self.request("POST", f"/models/{_quote(model)}/outcomes", data=data,
                            content_type=content_type)[2]

    def serving_report(self, model: str, *, version: int | None = None,
                       since: str | None = None, window: str | None = None) -> dict:
        from urllib.parse import urlencode

        query = {k: v for k, v in (("version", version), ("since", since), ("window", window))
                 if v is not None}
        suffix = f"?{urlencode(query)}" if query else ""
        return self._get(f"/models/{_quote(model)}/serving-report{suffix}")

    def list_evaluations(self, model: str, version: int) -> dict:
        return self._get(f"/models/{_quote(model)}/versions/{int(version)}/evaluations")

    def lineage(self, node: str, direction: str, *, depth: int | None = None,
                output_format: str = "json") -> dict:
        query = {"node": node, "direction": direction, "format": output_format}
        if depth is not None:
            query["depth"] = str(int(depth))
        return self._get("/lineage?" + urllib.parse.urlencode(query))

    def recall(self, dataset: str, reason: str) -> dict:
        return self._post(f"/datasets/{_quote(dataset)}/recall", {"reason": reason})

    # --- people, tokens, audit, schemas ----------------------------------------------------

    def list_users(self) -> dict:
        return self._get("/users")

    def grant_role(self, user: str, role: str) -> dict:
        return self._post(f"/users/{_quote(user)}/roles", {"role": role})

    def revoke_role(self, user: str, role: str) -> dict:
        return self.request("DELETE", f"/users/{_quote(user)}/roles/{_quote(role)}")[2]

    def list_tokens(self) -> dict:
        return self._get("/tokens")

    def create_token(self, user: str, role: str, expires: str | None = None,
                     label: str = "") -> dict:
        body = {"user": user, "role": role, "label": label}
        if expires:
            body["expires"] = expires
        return self._post("/tokens", body)

    def revoke_token(self, token_id: int) -> dict:
        return self.request("DELETE", f"/tokens/{int(token_id)}")[2]

    def verify_audit(self) -> dict:
        return self._get("/audit/verify")

    def list_keys(self) -> dict:
        return self._get("/keys")

    def check_schemas(self, reader: Any, writer: Any) -> dict:
        """Both schemas as JSON values (what an .avsc file holds, parsed)."""
        return self._post("/schemas/check", {"reader": reader, "writer": writer})


def _waivers(waivers: Waivers) -> list[dict[str, str]]:
    return [{"gate": gate, "reason": reason} for gate, reason in waivers]


def _quote(segment: str) -> str:
    return urllib.parse.quote(segment, safe="")


def _json(payload: bytes) -> Any:
    if not payload:
        return None
    try:
        return json.loads(payload)
    except (UnicodeDecodeError, json.JSONDecodeError):
        return None
