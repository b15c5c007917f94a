"""Bodies that arrive too large, cut short or badly framed: a 4xx problem document before any
use case runs, and nothing written. `wsgi.input_terminated` is set as gunicorn sets it, so the
server (not werkzeug) is the one that ends the stream."""

from __future__ import annotations

import io
import json

from tests.api.api_helpers import problem, set_up_model
from tests.api.test_api_bad_input import CountingStream

AS_GUNICORN_DOES = {"wsgi.input_terminated": True}


def arriving(stream, announced: int | None, content_type: str) -> dict:
    """The WSGI keys of a body as the server hands it over (the test client would measure a
    stream itself and announce its true length)."""
    environ = {**AS_GUNICORN_DOES, "wsgi.input": stream, "CONTENT_TYPE": content_type}
    environ["CONTENT_LENGTH"] = "" if announced is None else str(announced)
    return environ


def _state(api) -> tuple:
    return api.get("/audit/verify", role="admin").json["events"], api.get("/models").get_data()


def test_the_default_limit_refuses_a_body_announcing_a_gigabyte_before_reading_it(api):
    assert api.client.application.config["MAX_CONTENT_LENGTH"] == 64 * 1024 * 1024
    stream = CountingStream(2**30)
    response = api.client.post("/api/v1/models", input_stream=stream,
                               headers={**api.headers("admin"), "Content-Length": str(2**30),
                                        "Content-Type": "application/json"},
                               environ_overrides=AS_GUNICORN_DOES)
    assert response.status_code == 413
    assert problem(response)["type"].endswith("/payload-too-large")
    assert stream.read_bytes == 0


def test_a_body_cut_short_before_its_length_is_a_400_and_creates_nothing(api):
    before = _state(api)
    body = json.dumps({"name": "main-burst-risk"}).encode()
    response = api.client.post("/api/v1/models", headers=api.headers("admin"),
                               environ_overrides=arriving(io.BytesIO(body), len(body) + 40,
                                                         "application/json"))
    assert response.status_code == 400, response.data
    document = problem(response)
    assert f"ended after {len(body)} of the {len(body) + 40} bytes" in document["detail"]
    assert _state(api) == before


def test_a_multipart_upload_cut_short_registers_nothing(api, tmp_path):
    set_up_model(api, tmp_path)
    before = _state(api)
    body = (b"--x\r\nContent-Disposition: form-data; name=\"document\"; filename=\"d.pfa.json\""
            b"\r\n\r\n{\"input\": \"double\"")
    response = api.client.post("/api/v1/models/m/versions", headers=api.headers("publisher"),
                               environ_overrides=arriving(io.BytesIO(body), len(body) + 500,
                                                         "multipart/form-data; boundary=x"))
    assert response.status_code == 400, response.data
    problem(response)
    assert _state(api) == before


class BadChunks(io.RawIOBase):
    """What a server's chunked-body reader does with `zz\\r\\n` as a chunk size: it raises."""

    def readable(self) -> bool:
        return True

    def readinto(self, buffer) -> int:
        raise RuntimeError("Invalid chunk size: 'zz'")


def test_malformed_chunked_framing_is_a_400_problem_not_a_server_error(api):
    before = _state(api)
    response = api.client.post("/api/v1/models", headers=api.headers("admin"),
                               environ_overrides={**arriving(BadChunks(), None,
                                                             "application/json"),
                                                  "HTTP_TRANSFER_ENCODING": "chunked"})
    assert response.status_code == 400, response.data
    assert "Invalid chunk size" in problem(response)["detail"]
    assert _state(api) == before
