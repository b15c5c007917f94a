"""Problem documents (RFC 9457): one stable type and title per error kind."""

from __future__ import annotations

import importlib
import json
import pkgutil

import registry
from registry.api.problems import PROBLEM_BASE, TITLES
from registry.errors import LockkeeperError

from tests.api.api_helpers import problem


def _subclasses(cls):
    for sub in cls.__subclasses__():
        yield sub
        yield from _subclasses(sub)


def test_every_error_kind_has_a_title():
    for module in pkgutil.walk_packages(registry.__path__, "registry."):
        if module.name != "registry.api.wsgi":
            importlib.import_module(module.name)
    kinds = {cls.kind for cls in _subclasses(LockkeeperError) if isinstance(cls.kind, str)}
    assert kinds - set(TITLES) == set()


def test_a_problem_document_has_every_member_rfc_9457_defines(api):
    response = api.get("/models/nothing")
    document = problem(response)
    # RFC 9457 section 3.1: type, title, status, detail, instance; `place` is our extension.
    assert document == {"type": PROBLEM_BASE + "not-found", "title": TITLES["not-found"],
                        "status": 404, "detail": "unknown model 'nothing'",
                        "instance": "/api/v1/models/nothing", "place": "model"}


def test_a_schema_problem_names_the_file_and_the_pointer(api):
    response = api.post("/schemas/check", {"reader": {"type": "record", "name": "R"},
                                           "writer": "int"}, role="reader")
    document = problem(response)
    assert response.status_code == 422
    assert document["type"] == PROBLEM_BASE + "invalid-schema"
    assert document["source"] == "reader" and document["place"] == "/"


def test_the_schema_check_answers_like_the_cli(api):
    reader = {"type": "record", "name": "R", "fields": [{"name": "a", "type": "long"}]}
    writer = {"type": "record", "name": "R", "fields": [{"name": "a", "type": "string"}]}
    response = api.post("/schemas/check", {"reader": reader, "writer": writer}, role="reader")
    assert response.status_code == 200
    document = json.loads(response.data)
    assert document["compatible"] is False
    assert document["problems"][0]["path"] == "/fields/a/type"
    assert set(document) == {"compatible", "problems", "notes"}
    promoted = api.post("/schemas/check", {"reader": {"type": "long"}, "writer": "int"},
                        role="reader")
    # Avro specification, Schema Resolution: int is promotable to long.
    assert promoted.json["compatible"] is True


def test_an_app_sharing_the_api_keeps_its_own_error_pages():
    from flask import Flask

    from registry.api import register_api

    app = Flask("web-pages")

    @app.errorhandler(404)
    def page_not_found(error):
        return "<p>no such page</p>", 404

    register_api(app)
    client = app.test_client()
    assert client.get("/no-such-page").data == b"<p>no such page</p>"
    assert client.get("/api/v1/no-such-route").mimetype == "application/problem+json"
