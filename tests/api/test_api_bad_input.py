"""Bad input over HTTP: each is a 4xx problem document, and nothing is stored."""

from __future__ import annotations

import io
import json

import pytest

from tests.api.api_helpers import make_api, problem, set_up_model, upload_parts
from tests.catalogue.helpers import write_version_files

SQL_LOOKING = "x'; DROP TABLE models; --"
SCRIPT_LOOKING = "<script>alert('lockkeeper')</script>"


def _state(api) -> tuple:
    """What a refused request must leave as it was: the audit log and every model."""
    events = api.get("/audit/verify", role="admin").json["events"]
    return events, api.get("/models").get_data()


def _refused(api, response, status: int, kind: str) -> dict:
    assert response.status_code == status, response.data
    document = problem(response)
    assert document["type"] == f"https://lockkeeper.invalid/problems/{kind}"
    return document


@pytest.fixture
def ready(api, tmp_path):
    set_up_model(api, tmp_path)
    return api


BAD_MODEL_BODIES = [
    ("malformed JSON", b'{"name": "x",', "application/json", 400, "malformed-json"),
    ("JSON that is not UTF-8", b'{"name": "\xff"}', "application/json", 400, "malformed-json"),
    ("wrong content type", b'{"name": "x"}', "text/plain", 415, "unsupported-media-type"),
    ("form instead of JSON", b"name=x", "application/x-www-form-urlencoded", 415,
     "unsupported-media-type"),
    ("unknown field", b'{"name": "x", "colour": "red"}', "application/json", 400,
     "unknown-fields"),
    ("missing field", b'{"description": "x"}', "application/json", 400, "bad-input"),
    ("wrong field type", b'{"name": 7}', "application/json", 400, "bad-input"),
    ("not an object", b'["x"]', "application/json", 400, "bad-input"),
    ("path traversal in a name", b'{"name": "../../etc/passwd"}', "application/json", 400,
     "bad-input"),
    ("SQL-looking name", json.dumps({"name": SQL_LOOKING}).encode(), "application/json", 400,
     "bad-input"),
    ("script-looking name", json.dumps({"name": SCRIPT_LOOKING}).encode(), "application/json",
     400, "bad-input"),
]


BAD_PATHS = ["/models/..%2F..%2Fetc/status", "/models/%3Cscript%3E/status",
             "/models/x%27%3B%20DROP%20TABLE%20models%3B--/status", "/models/UPPER/stages/live",
             "/models/m/stages/..", "/models/m/stages/%00", "/reports/99999999999999999999999",
             "/models/m/versions/-1/check"]


def test_a_bad_body_is_a_problem_and_stores_nothing(ready):
    # One catalogue for every case (each leaves it as it was), to keep the suite quick.
    before = _state(ready)
    for case, body, content_type, status, kind in BAD_MODEL_BODIES:
        response = ready.post("/models", data=body, headers={"Content-Type": content_type})
        assert response.status_code == status, (case, response.data)
        assert problem(response)["type"].endswith("/" + kind), case
        assert _state(ready) == before, case


def test_a_bad_name_in_the_path_is_a_4xx_problem(ready):
    before = _state(ready)
    for path in BAD_PATHS:
        response = ready.get(path)
        assert 400 <= response.status_code < 500, path
        problem(response)
    assert _state(ready) == before


@pytest.mark.parametrize("description", [SQL_LOOKING, SCRIPT_LOOKING])
def test_descriptions_are_stored_verbatim_and_returned_as_json(ready, description):
    created = ready.post("/models", {"name": "described", "description": description})
    assert created.status_code == 201
    shown = ready.get("/models/described")
    assert shown.mimetype == "application/json"
    assert shown.json["model"]["description"] == description
    assert [m["name"] for m in ready.get("/models").json["models"]] == ["described", "m"]


def test_a_missing_token_on_a_write_is_a_401_problem(ready):
    before = _state(ready)
    _refused(ready, ready.post("/models", {"name": "x"}, role=None), 401, "unauthenticated")
    response = ready.client.post("/api/v1/models", json={"name": "x"},
                                 headers={"Authorization": "Bearer lkt_guess"})
    _refused(ready, response, 401, "unauthenticated")
    assert _state(ready) == before


def test_a_registration_as_json_is_a_415_problem(ready):
    before = _state(ready)
    response = ready.post("/models/m/versions", {"document": "x"}, role="publisher")
    _refused(ready, response, 415, "unsupported-media-type")
    assert _state(ready) == before


def test_an_unused_upload_part_is_refused(ready, tmp_path):
    document, manifest = write_version_files(tmp_path / "v1")
    parts = upload_parts(document, manifest)
    parts["../../etc/passwd"] = (io.BytesIO(b"root"), "passwd")
    before = _state(ready)
    response = ready.post("/models/m/versions", role="publisher", data=parts,
                          content_type="multipart/form-data")
    assert _refused(ready, response, 400, "unknown-fields")["place"] == "../../etc/passwd"
    assert _state(ready) == before


def test_a_missing_schema_part_names_the_part_it_needs(ready, tmp_path):
    document, manifest = write_version_files(tmp_path / "v1")
    parts = upload_parts(document, manifest)
    del parts["input.avsc"]
    before = _state(ready)
    response = ready.post("/models/m/versions", role="publisher", data=parts,
                          content_type="multipart/form-data")
    assert "input.avsc" in _refused(ready, response, 400, "bad-input")["detail"]
    assert _state(ready) == before


def test_an_invalid_schema_upload_is_a_422_problem(ready, tmp_path):
    document, manifest = write_version_files(tmp_path / "v1")
    (tmp_path / "v1" / "input.avsc").write_text('{"type": "record", "name": "R"}')
    before = _state(ready)
    response = ready.post("/models/m/versions", role="publisher",
                          data=upload_parts(document, manifest),
                          content_type="multipart/form-data")
    document = _refused(ready, response, 422, "invalid-schema")
    assert document["source"] == "input_schema" and document["place"] == "/"
    assert _state(ready) == before


class CountingStream(io.RawIOBase):
    """A request body of `size` bytes that counts what the server reads of it."""

    def __init__(self, size: int) -> None:
        self.size = size
        self.position = 0
        self.read_bytes = 0

    def readable(self) -> bool:
        return True

    def seekable(self) -> bool:
        return True

    def seek(self, offset: int, whence: int = 0) -> int:
        self.position = {0: offset, 1: self.position + offset, 2: self.size + offset}[whence]
        return self.position

    def tell(self) -> int:
        return self.position

    def readinto(self, buffer) -> int:
        count = min(len(buffer), self.size - self.position)
        buffer[:count] = b"x" * count
        self.position += count
        self.read_bytes += count
        return count


def test_an_oversize_upload_is_refused_before_its_body_is_read(cli, tmp_path):
    small = make_api(cli, config={"MAX_CONTENT_LENGTH": 10_000})
    set_up_model(small, tmp_path)
    before = _state(small)
    stream = CountingStream(50_000_000)
    response = small.client.post(
        "/api/v1/models/m/versions", input_stream=stream,
        headers={**small.headers("publisher"), "Content-Length": "50000000",
                 "Content-Type": "multipart/form-data; boundary=x"})
    _refused(small, response, 413, "payload-too-large")
    assert stream.read_bytes == 0
    assert _state(small) == before


def test_an_oversize_upload_without_a_length_is_cut_off(cli, tmp_path):
    small = make_api(cli, config={"MAX_CONTENT_LENGTH": 10_000})
    set_up_model(small, tmp_path)
    document, manifest = write_version_files(tmp_path / "big", document=b"x" * 50_000)
    before = _state(small)
    response = small.post("/models/m/versions", role="publisher",
                          data=upload_parts(document, manifest),
                          content_type="multipart/form-data")
    _refused(small, response, 413, "payload-too-large")
    assert _state(small) == before


def test_an_unknown_path_and_a_wrong_method_are_problems(ready):
    _refused(ready, ready.get("/nothing-here"), 404, "not-found")
    response = ready.client.delete("/api/v1/models", headers=ready.headers("admin"))
    _refused(ready, response, 405, "method-not-allowed")
    assert "GET" in response.headers["Allow"]


def test_deeply_nested_input_is_a_400_problem_never_a_server_error(ready, tmp_path):
    before = _state(ready)
    for body in ("[" * 100_000 + "]" * 100_000,
                 '{"reader": ' + "[" * 200 + '"int"' + "]" * 200 + ', "writer": "int"}'):
        response = ready.post("/schemas/check", data=body, role="reader",
                              headers={"Content-Type": "application/json"})
        assert response.status_code == 400 and "nests" in problem(response)["detail"]
    document, manifest = write_version_files(tmp_path / "deep")
    (tmp_path / "deep" / "input.avsc").write_text("[" * 50_000 + '"int"' + "]" * 50_000)
    response = ready.post("/models/m/versions", role="publisher",
                          data=upload_parts(document, manifest),
                          content_type="multipart/form-data")
    assert 400 <= response.status_code < 500
    problem(response)
    assert _state(ready) == before
