"""Registering over HTTP gives exactly the version `lockkeeper register` gives; four eyes."""

from __future__ import annotations

import io
import shutil
from pathlib import Path

from sqlalchemy import select

from registry.store import tables as t
from registry.store.blob_store import BlobStore
from registry.store.catalogue import open_catalogue

from tests.api.api_helpers import problem, set_up_model
from tests.conftest import Cli

SEED = Path(__file__).resolve().parents[2] / "seed_data" / "brackwater"
MANIFEST = """description = "Logistic regression on asset and telemetry features"
code_revision = "3f9c2e1"
author = "ines.okafor"
input_schema = "../schemas/segment-v1.avsc"
output_schema = "../schemas/burst-risk.avsc"
"""


def _brackwater_files(folder: Path) -> tuple[Path, Path]:
    """The v1 document and schemas of main-burst-risk, laid out as in seed_data/."""
    (folder / "manifests").mkdir(parents=True)
    shutil.copytree(SEED / "schemas", folder / "schemas")
    document = folder / "main-burst-risk-v1.pfa.json"
    shutil.copy(SEED / "documents" / "main-burst-risk-v1.pfa.json", document)
    manifest = folder / "manifests" / "main-burst-risk-v1.toml"
    manifest.write_text(MANIFEST)
    return document, manifest


def _stored(url: str, model: str) -> tuple:
    catalogue = open_catalogue(url)
    try:
        with catalogue.sessions() as session:
            version = session.execute(
                select(t.Version).join(t.Model, t.Model.id == t.Version.model_id)
                .where(t.Model.name == model)).scalar_one()
            blob = BlobStore(session).get(version.stored_blob_digest)
            return (version.document_digest, version.registration_digest, blob,
                    version.stored_blob_digest, version.features_json,
                    version.input_schema_json, version.output_schema_json,
                    version.document_summary_json)
    finally:
        catalogue.close()


def _upload(document: Path, manifest: Path) -> dict:
    return {"document": (io.BytesIO(document.read_bytes()), document.name),
            "manifest": (io.BytesIO(manifest.read_bytes()), manifest.name),
            "../schemas/segment-v1.avsc": (io.BytesIO(
                (manifest.parent / "../schemas/segment-v1.avsc").read_bytes()), "segment-v1.avsc"),
            "../schemas/burst-risk.avsc": (io.BytesIO(
                (manifest.parent / "../schemas/burst-risk.avsc").read_bytes()), "burst-risk.avsc")}


def test_a_version_registered_over_http_is_identical_to_one_registered_locally(api, tmp_path):
    document, manifest = _brackwater_files(tmp_path / "files")
    local = Cli(f"sqlite:///{tmp_path / 'local.db'}")
    assert local("init").exit_code == 0
    local.json("model", "create", "main-burst-risk")
    registered_locally = local.json("register", "main-burst-risk", str(document),
                                    "--manifest", str(manifest))

    assert api.post("/models", {"name": "main-burst-risk"}).status_code == 201
    over_http = api.post("/models/main-burst-risk/versions", role="publisher",
                         data=_upload(document, manifest), content_type="multipart/form-data")
    assert over_http.status_code == 201, over_http.data
    for key in ("version", "document_digest", "registration_digest"):
        assert over_http.json[key] == registered_locally[key]
    assert _stored(api.url, "main-burst-risk") == _stored(local.url, "main-burst-risk")

    # The same upload again is the same registration: nothing new.
    again = api.post("/models/main-burst-risk/versions", role="publisher",
                     data=_upload(document, manifest), content_type="multipart/form-data")
    assert again.status_code == 200 and again.json["created"] is False


def test_explicit_schema_parts_stand_in_for_the_manifests_paths(api, tmp_path):
    document, manifest = _brackwater_files(tmp_path / "files")
    assert api.post("/models", {"name": "main-burst-risk"}).status_code == 201
    parts = _upload(document, manifest)
    parts["input_schema"] = parts.pop("../schemas/segment-v1.avsc")
    parts["output_schema"] = parts.pop("../schemas/burst-risk.avsc")
    response = api.post("/models/main-burst-risk/versions", role="publisher", data=parts,
                        content_type="multipart/form-data")
    assert response.status_code == 201, response.data


def test_four_eyes_the_author_cannot_approve_their_own_version(api, cli, tmp_path):
    set_up_model(api, tmp_path, "m", {"live": ["approved"]})
    # tomas.lindqvist, an approver, wrote this version; ines.okafor registered it.
    folder = tmp_path / "v1"
    folder.mkdir()
    for name, text in (("input.avsc", '{"type": "record", "name": "R", "fields": []}'),
                       ("manifest.toml", 'author = "tomas.lindqvist"\ninput_schema = '
                                         '"input.avsc"\n')):
        (folder / name).write_text(text)
    parts = {"document": (io.BytesIO(b"doc"), "model.bin"),
             "manifest": (io.BytesIO((folder / "manifest.toml").read_bytes()), "manifest.toml"),
             "input.avsc": (io.BytesIO((folder / "input.avsc").read_bytes()), "input.avsc")}
    assert api.post("/models/m/versions", role="publisher", data=parts,
                    content_type="multipart/form-data").status_code == 201

    own = api.post("/models/m/versions/1/approve", {"stage": "live"}, role="approver")
    assert 400 <= own.status_code < 500 and "four eyes" in problem(own)["detail"]
    refused = api.post("/models/m/versions/1/promote", {"stage": "live"}, role="approver")
    assert refused.status_code == 200 and refused.json["moved"] is False

    from tests.api.api_helpers import SECOND_APPROVER, ADMIN
    from registry.service import tokens

    catalogue = open_catalogue(api.url)
    try:
        second = tokens.create_token(catalogue, SECOND_APPROVER, "approver", ADMIN).secret
    finally:
        catalogue.close()
    headers = {"Authorization": f"Bearer {second}"}
    approved = api.client.post("/api/v1/models/m/versions/1/approve", json={"stage": "live"},
                               headers=headers)
    assert approved.status_code == 200 and approved.json["approver"] == SECOND_APPROVER
    promoted = api.post("/models/m/versions/1/promote", {"stage": "live"}, role="approver")
    assert promoted.json["moved"] is True
