"""An API app over a fresh catalogue, with one token per role for the Brackwater people."""

from __future__ import annotations

import io
import json
import threading
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass, field
from pathlib import Path

from werkzeug.serving import make_server

from registry.app import create_app
from registry.service import tokens
from registry.service.actors import Actor
from registry.store.catalogue import open_catalogue

from tests.catalogue.helpers import write_version_files
from tests.catalogue.stage_helpers import policy_keeping, set_up_people

ADMIN = Actor("mara.kowalczyk", frozenset({"admin"}))
# Who carries each role's token; the reader is a scoring service that only polls.
HOLDERS = {"reader": "burst-scoring-service", "publisher": "ines.okafor",
           "approver": "tomas.lindqvist", "admin": "mara.kowalczyk"}
SECOND_APPROVER = "priya.raman"


@dataclass
class Api:
    """A test client over the API and the secret of one token per role."""

    url: str
    client: object
    secrets: dict[str, str] = field(default_factory=dict)

    def headers(self, role: str | None) -> dict[str, str]:
        return {"Authorization": f"Bearer {self.secrets[role]}"} if role else {}

    def get(self, path: str, role: str | None = "reader", **kwargs):
        return self.client.get("/api/v1" + path, headers={**self.headers(role),
                                                          **kwargs.pop("headers", {})}, **kwargs)

    def post(self, path: str, body=None, role: str | None = "admin", **kwargs):
        if body is not None:
            kwargs["json"] = body
        return self.client.post("/api/v1" + path, headers={**self.headers(role),
                                                           **kwargs.pop("headers", {})}, **kwargs)

    def put(self, path: str, body=None, role: str | None = "admin", **kwargs):
        return self.client.put("/api/v1" + path, json=body, headers=self.headers(role), **kwargs)

    def delete(self, path: str, role: str | None = "admin", **kwargs):
        return self.client.delete("/api/v1" + path, headers=self.headers(role), **kwargs)

    def register(self, model: str, folder: Path, *, tag: str = "v1", role: str = "publisher",
                 document: bytes | None = None):
        document_path, manifest_path = write_version_files(
            folder / tag, document=document or tag.encode(), description=tag)
        return self.post(f"/models/{model}/versions", role=role,
                         data=upload_parts(document_path, manifest_path),
                         content_type="multipart/form-data")


def upload_parts(document_path: Path, manifest_path: Path) -> dict:
    """The parts of a registration upload: document, manifest and the files the manifest names,
    each under the relative path the manifest gives."""
    base = manifest_path.parent
    parts = {"document": (io.BytesIO(document_path.read_bytes()), document_path.name),
             "manifest": (io.BytesIO(manifest_path.read_bytes()), manifest_path.name)}
    for relative in ("input.avsc", "output.avsc"):
        parts[relative] = (io.BytesIO((base / relative).read_bytes()), relative)
    return parts


def make_tokens(url: str) -> dict[str, str]:
    catalogue = open_catalogue(url)
    try:
        return {role: tokens.create_token(catalogue, user, role, ADMIN).secret
                for role, user in HOLDERS.items()}
    finally:
        catalogue.close()


@contextmanager
def served(app) -> Iterator[str]:
    """The app on a loopback port of its own, in a thread; yields its base URL."""
    server = make_server("127.0.0.1", 0, app, threaded=True)
    thread = threading.Thread(target=server.serve_forever, daemon=True)
    thread.start()
    try:
        yield f"http://127.0.0.1:{server.server_port}"
    finally:
        server.shutdown()
        thread.join(5)


def open_api(url: str, secrets: dict[str, str], *, config: dict | None = None) -> Api:
    app = create_app(url, pages=False, config={"TESTING": True, **(config or {})})
    return Api(url=url, client=app.test_client(), secrets=secrets)


def make_api(cli, *, config: dict | None = None) -> Api:
    """An app of its own (with its own config) over the test's catalogue, with new tokens."""
    set_up_people(cli)
    return open_api(cli.url, make_tokens(cli.url), config=config)


def set_up_model(api: Api, tmp_path: Path, name: str = "m",
                 gates_by_stage: dict[str, list[str]] | None = None) -> None:
    assert api.post("/models", {"name": name}).status_code == 201
    policy = policy_keeping(gates_by_stage or {}, skippable=("shadow", "canary"))
    assert api.put(f"/models/{name}/policy", {"policy": policy}).status_code == 200


def problem(response) -> dict:
    assert response.mimetype == "application/problem+json", response.data
    document = json.loads(response.data)
    assert document["status"] == response.status_code
    assert document["type"].startswith("https://lockkeeper.invalid/problems/")
    assert document["title"] and document["detail"]
    return document
