"""One rule, three doors: every write use case, for every role, gets the same allow or deny through
the local command line, the remote command line (--server) and the HTTP API, as the service's
authorisation table says; and a denial changes nothing (the audit head stays where it was).

Each role gets a catalogue of its own (on SQLite and, when configured, PostgreSQL), and the three
doors take turns on it, case by case. The service authorises before it checks anything else, so
an allowed call that then fails for another reason (already retired, refused by a gate) still
counts as allowed: what is compared is whether the door said "forbidden".
"""

from __future__ import annotations

import io
import json
import threading
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

import pytest
from click.testing import CliRunner
from sqlalchemy import create_engine, text
from werkzeug.serving import make_server

from registry.app import create_app
from registry.cli import main
from registry.service import tokens
from registry.service.actors import Actor
from registry.service.authorisation import ACTIONS
from registry.store.catalogue import open_catalogue

from tests.api.api_helpers import upload_parts
from tests.catalogue.helpers import write_version_files
from tests.catalogue.stage_helpers import PEOPLE, policy_keeping
from tests.conftest import Cli

ROLES = ("none", "reader", "publisher", "approver", "admin")
ADMIN = "mara.kowalczyk"
AUTHOR = "ines.okafor"
# Live keeps two gates, so moving into or out of live is a guarded move; shadow and canary keep
# none, so moves there need only a publisher or an approver.
POLICY = policy_keeping({"live": ["approved", "lineage-complete"]}, skippable=("shadow", "canary"))


def acting_user(role: str) -> str:
    return f"door-{role}"


@dataclass(frozen=True)
class Case:
    """One write: the action the service should decide on, its command line, and its request."""

    name: str
    action: str
    argv: Callable[[str, Path], list[str]]          # (door, files) -> arguments
    request: Callable[[str, Path, dict], tuple] | None  # (door, files, ids) -> method, path, kwargs
    # The signing key's file is on the machine that runs the command, so its actions have only
    # the local door.
    doors: tuple[str, ...] = ("local", "remote", "api")


def _json(body: dict) -> dict:
    return {"json": body}


def _register_upload(files: Path) -> dict:
    document, manifest = files / "v-new" / "model.bin", files / "v-new" / "manifest.toml"
    return {"data": upload_parts(document, manifest), "content_type": "multipart/form-data"}


def _dataset_upload(files: Path, name: str) -> dict:
    return {"data": {"name": name, "role": "source",
                     "file": (io.BytesIO((files / "small.csv").read_bytes()), "small.csv"),
                     "schema": (io.BytesIO((files / "small.avsc").read_bytes()), "small.avsc")},
            "content_type": "multipart/form-data"}


def _evaluation_upload(files: Path) -> dict:
    return {"data": {"dataset": "scoring-set",
                     "predictions": (io.BytesIO((files / "predictions.csv").read_bytes()),
                                     "predictions.csv")},
            "content_type": "multipart/form-data"}


def _schema_body(files: Path, name: str, **extra) -> dict:
    return _json({"schema": json.loads((files / name).read_text()), **extra})


# Feeds and consumers (issue 19): the feed `f` and the consumer `c` exist from the start.
CONTRACT_CASES = [
    Case("create a feed", "feed.create", lambda d, f: ["feed", "create", f"feed-{d}"],
         lambda d, f, ids: ("POST", "/feeds", _json({"name": "feed-api"}))),
    Case("publish a feed schema", "feed.publish",
         lambda d, f: ["feed", "publish", "f", str(f / "feed-v2.avsc")],
         lambda d, f, ids: ("POST", "/feeds/f/schemas", _schema_body(f, "feed-v2.avsc"))),
    Case("publish over a refusal", "feed.waive",
         lambda d, f: ["feed", "publish", "f", str(f / "feed-v3.avsc"), "--waive", "--reason",
                       "the producer moves the field"],
         lambda d, f, ids: ("POST", "/feeds/f/schemas", _schema_body(
             f, "feed-v3.avsc", waiver_reason="the producer moves the field"))),
    Case("declare a model's feed", "model.set-feed", lambda d, f: ["model", "set-feed", "m", "f"],
         lambda d, f, ids: ("PUT", "/models/m/feed", _json({"feed": "f"}))),
    Case("declare a consumer", "consumer.add",
         lambda d, f: ["consumer", "add", f"reader-{d}", "--reads", "m", "--schema",
                       str(f / "reader.avsc")],
         lambda d, f, ids: ("POST", "/consumers", _json({
             "name": "reader-api", "model": "m",
             "schema": json.loads((f / "reader.avsc").read_text())}))),
    Case("update a consumer", "consumer.update",
         lambda d, f: ["consumer", "update", "c", "--schema", str(f / "reader-v2.avsc")],
         lambda d, f, ids: ("POST", "/consumers/c/schemas", _schema_body(f, "reader-v2.avsc"))),
    Case("remove a consumer", "consumer.remove", lambda d, f: ["consumer", "remove", "c-gone"],
         lambda d, f, ids: ("DELETE", "/consumers/c-gone", {})),
]


def _prepare_contracts(cli: Cli, files: Path) -> None:
    from tests.catalogue.helpers import INPUT_SCHEMA, OUTPUT_SCHEMA

    grown = {**INPUT_SCHEMA, "fields": [*INPUT_SCHEMA["fields"],
                                        {"name": "extra", "type": "int", "default": 0}]}
    for name, schema in (("feed-v1.avsc", INPUT_SCHEMA), ("feed-v2.avsc", grown),
                         ("feed-v3.avsc", {**INPUT_SCHEMA, "fields": INPUT_SCHEMA["fields"][:1]}),
                         ("reader.avsc", OUTPUT_SCHEMA),
                         ("reader-v2.avsc", {**OUTPUT_SCHEMA, "doc": "second reader"})):
        (files / name).write_text(json.dumps(schema))
    cli.json("feed", "create", "f", user=AUTHOR)
    cli.json("feed", "publish", "f", str(files / "feed-v1.avsc"), user=AUTHOR)
    for consumer in ("c", "c-gone"):
        cli.json("consumer", "add", consumer, "--reads", "m", "--schema",
                 str(files / "reader.avsc"), user=AUTHOR)


def _file_upload(files: Path, name: str) -> dict:
    return {"data": {"file": (io.BytesIO((files / name).read_bytes()), name)},
            "content_type": "multipart/form-data"}


CASES = [
    Case("list tokens", "token.list", lambda d, f: ["token", "list"],
         lambda d, f, ids: ("GET", "/tokens", {})),
    Case("make a token", "token.create",
         lambda d, f: ["token", "create", "--user", AUTHOR, "--role", "reader"],
         lambda d, f, ids: ("POST", "/tokens", _json({"user": AUTHOR, "role": "reader"}))),
    Case("revoke a token", "token.revoke", lambda d, f: ["token", "revoke", "{spare_token}"],
         lambda d, f, ids: ("DELETE", f"/tokens/{ids['spare_token']}", {})),
    Case("grant a role", "role.grant", lambda d, f: ["user", "grant", f"new-{d}", "publisher"],
         lambda d, f, ids: ("POST", "/users/new-api/roles", _json({"role": "publisher"}))),
    Case("revoke a role", "role.revoke", lambda d, f: ["user", "revoke", "spare.person",
                                                       "publisher"],
         lambda d, f, ids: ("DELETE", "/users/spare.person/roles/publisher", {})),
    Case("create a model", "model.create", lambda d, f: ["model", "create", f"made-{d}"],
         lambda d, f, ids: ("POST", "/models", _json({"name": "made-api"}))),
    Case("set a policy", "model.set-policy",
         lambda d, f: ["model", "policy", "set", "m", str(f / "policy.toml")],
         lambda d, f, ids: ("PUT", "/models/m/policy", _json({"policy": POLICY}))),
    Case("add a dataset", "dataset.add",
         lambda d, f: ["dataset", "add", f"small-{d}", str(f / "small.csv"), "--schema",
                       str(f / "small.avsc")],
         lambda d, f, ids: ("POST", "/datasets", _dataset_upload(f, "small-api"))),
    Case("recall a dataset", "dataset.recall",
         lambda d, f: ["dataset", "recall", "recallable", "--reason", "bad sensor batch"],
         lambda d, f, ids: ("POST", "/datasets/recallable/recall",
                            _json({"reason": "bad sensor batch"}))),
    Case("register a version", "version.register",
         lambda d, f: ["register", "m", str(f / "v-new" / "model.bin"), "--manifest",
                       str(f / "v-new" / "manifest.toml")],
         lambda d, f, ids: ("POST", "/models/m/versions", _register_upload(f))),
    Case("evaluate a version", "evaluation.add",
         lambda d, f: ["evaluate", "m", "2", "--dataset", "scoring-set", "--predictions",
                       str(f / "predictions.csv"), "--task", "binary"],
         lambda d, f, ids: ("POST", "/models/m/versions/2/evaluations", _evaluation_upload(f))),
    Case("retire a candidate", "version.retire", lambda d, f: ["retire", "m", "4"],
         lambda d, f, ids: ("POST", "/models/m/versions/4/retire", {})),
    Case("retire the live version", "stage.guarded-move", lambda d, f: ["retire", "m", "1"],
         lambda d, f, ids: ("POST", "/models/m/versions/1/retire", {})),
    Case("roll back an unguarded stage", "stage.rollback",
         lambda d, f: ["rollback", "m", "--stage", "canary"],
         lambda d, f, ids: ("POST", "/models/m/stages/canary/rollback", {})),
    Case("waive a gate (in a dry run)", "gate.waive",
         lambda d, f: ["check", "m", "5", "--to", "live", "--waive", "lineage-complete",
                       "--reason", "lineage recorded by hand"],
         lambda d, f, ids: ("POST", "/models/m/versions/5/check", _json(
             {"stage": "live", "waivers": [{"gate": "lineage-complete",
                                            "reason": "lineage recorded by hand"}]}))),
    Case("approve a version", "version.approve", lambda d, f: ["approve", "m", "5", "--for",
                                                               "live"],
         lambda d, f, ids: ("POST", "/models/m/versions/5/approve", _json({"stage": "live"}))),
    Case("promote into an unguarded stage", "stage.promote",
         lambda d, f: ["promote", "m", "5", "--to", "shadow"],
         lambda d, f, ids: ("POST", "/models/m/versions/5/promote", _json({"stage": "shadow"}))),
    Case("record served rows", "serving.record",
         lambda d, f: ["serving", "record", "m", str(f / "served.parquet")],
         lambda d, f, ids: ("POST", "/models/m/served", _file_upload(f, "served.parquet"))),
    Case("record outcomes", "serving.outcomes",
         lambda d, f: ["serving", "outcomes", "m", str(f / "outcomes.csv")],
         lambda d, f, ids: ("POST", "/models/m/outcomes", _file_upload(f, "outcomes.csv"))),
    Case("promote into a guarded stage", "stage.guarded-move",
         lambda d, f: ["promote", "m", "5", "--to", "live"],
         lambda d, f, ids: ("POST", "/models/m/versions/5/promote", _json({"stage": "live"}))),
    *CONTRACT_CASES,
    Case("create the signing key", "key.create", lambda d, f: ["key", "create"], None,
         doors=("local",)),
    Case("rotate the signing key", "key.rotate", lambda d, f: ["key", "rotate"], None,
         doors=("local",)),
    Case("sign a checkpoint", "audit.checkpoint", lambda d, f: ["audit", "checkpoint"], None,
         doors=("local",)),
]


def test_every_action_of_the_table_has_a_case():
    assert {case.action for case in CASES} == set(ACTIONS)


def _prepare(url: str, files: Path) -> dict:
    """The catalogue each role starts from: people, a model with five versions (v1 live, v2 on
    canary having displaced v3, v4 and v5 candidates), datasets, and a spare token and role."""
    cli = Cli(url)
    assert cli("init").exit_code == 0
    for person, role in PEOPLE.items():
        cli.json("user", "grant", person, role, user=ADMIN)
    for role in ROLES[1:]:
        cli.json("user", "grant", acting_user(role), role, user=ADMIN)
    cli.json("user", "grant", "spare.person", "publisher", user=ADMIN)
    cli.json("model", "create", "m", user=ADMIN)
    (files / "policy.toml").write_text(POLICY)
    cli.json("model", "policy", "set", "m", str(files / "policy.toml"), user=ADMIN)
    for number in range(1, 6):
        document, manifest = write_version_files(files / f"v{number}",
                                                 document=f"v{number}".encode(),
                                                 description=f"v{number}")
        cli.json("register", "m", str(document), "--manifest", str(manifest), user=AUTHOR)
    write_version_files(files / "v-new", document=b"v-new", description="new")
    cli.json("approve", "m", "1", "--for", "live", user="tomas.lindqvist")
    cli.json("promote", "m", "1", "--to", "live", "--waive", "lineage-complete", "--reason",
             "set-up", user="tomas.lindqvist", expect=0)
    cli.json("promote", "m", "3", "--to", "canary", user=AUTHOR)
    cli.json("promote", "m", "2", "--to", "canary", user=AUTHOR)
    rows = [f"s{i:03d},{i % 2},{0.2 + 0.6 * (i % 2) - 0.01 * (i % 7)}" for i in range(40)]
    (files / "small.csv").write_text("segment_id,x\n" + "".join(f"s{i:03d},{i}\n"
                                                                 for i in range(40)))
    (files / "scoring.csv").write_text("segment_id,label\n" + "".join(
        f"s{i:03d},{i % 2}\n" for i in range(40)))
    (files / "predictions.csv").write_text("row_id,label,score\n" + "\n".join(rows) + "\n")
    for name, second in (("small", "x"), ("scoring", "label")):
        (files / f"{name}.avsc").write_text(json.dumps({
            "type": "record", "name": name, "fields": [{"name": "segment_id", "type": "string"},
                                                       {"name": second, "type": "int"}]}))
    cli.json("dataset", "add", "recallable", str(files / "small.csv"), "--schema",
             str(files / "small.avsc"), user=AUTHOR)
    cli.json("dataset", "add", "scoring-set", str(files / "scoring.csv"), "--schema",
             str(files / "scoring.avsc"), "--role", "evaluation", "--key", "segment_id",
             "--exclude", "label", user=AUTHOR)
    _prepare_contracts(cli, files)
    from tests.after_release.served_files import now, shadow_day, write_outcomes

    _, served = shadow_day(files / "served.parquet", now(), 20, versions=(1,))
    write_outcomes(files / "outcomes.csv", served["ids"], [0, 1] * 10)
    catalogue = open_catalogue(url)
    try:
        admin = Actor(ADMIN, frozenset({"admin"}))
        secrets = {role: tokens.create_token(catalogue, acting_user(role), role, admin).secret
                   for role in ROLES[1:]}
        spare = tokens.create_token(catalogue, AUTHOR, "reader", admin).token.id
    finally:
        catalogue.close()
    return {"secrets": secrets, "spare_token": spare}


def _audit_head(url: str) -> tuple:
    engine = create_engine(url)
    try:
        with engine.connect() as connection:
            return tuple(connection.execute(text("SELECT sequence, hash FROM audit_head")).one())
    finally:
        engine.dispose()


def _cli_was_forbidden(result) -> bool:
    """Whether a command line run was refused for want of a role (or of any token at all)."""
    try:
        document = json.loads(result.stdout)
    except ValueError:
        document = None
    if isinstance(document, dict) and "error" in document:
        return document["error"]["kind"] in ("forbidden", "unauthenticated")
    line = result.stderr.lower()
    assert result.exit_code != 0 or not line.strip() or "warning" in line, result.output
    return result.exit_code == 2 and ("needs the" in line or "four eyes" in line
                                      or "bearer token" in line)


@pytest.mark.parametrize("role", ROLES)
def test_every_door_gives_the_same_answer_for_every_write(empty_catalogue_url, tmp_path, role):
    url = empty_catalogue_url
    prepared = _prepare(url, tmp_path)
    ids = {"spare_token": prepared["spare_token"]}
    token = prepared["secrets"].get(role)
    app = create_app(url, config={"TESTING": True}, pages=False)
    client = app.test_client()
    server = make_server("127.0.0.1", 0, app, threaded=True)
    thread = threading.Thread(target=server.serve_forever, daemon=True)
    thread.start()
    server_url = f"http://127.0.0.1:{server.server_port}"
    user = acting_user(role)
    try:
        for case in CASES:
            expected_forbidden = role not in ACTIONS[case.action].roles
            answers = {}
            for door in case.doors:
                before = _audit_head(url)
                if door == "api":
                    method, path, kwargs = case.request(door, tmp_path, ids)
                    headers = {"Authorization": f"Bearer {token}"} if token else {}
                    response = client.open("/api/v1" + path, method=method, headers=headers,
                                           **kwargs)
                    assert response.status_code < 500, (case.name, response.data)
                    forbidden = response.status_code in (401, 403)
                else:
                    argv = [a.replace("{spare_token}", str(ids["spare_token"]))
                            for a in case.argv(door, tmp_path)]
                    prefix = (["--db", url, "--as", user] if door == "local" else
                              ["--server", server_url] + (["--token", token] if token else []))
                    result = CliRunner().invoke(main, [*prefix, *argv, "--json"],
                                                env={"LOCKKEEPER_USER": user,
                                                     "LOCKKEEPER_TOKEN": ""},
                                                catch_exceptions=False)
                    forbidden = _cli_was_forbidden(result)
                answers[door] = forbidden
                if forbidden:
                    assert _audit_head(url) == before, (case.name, door, "a denial wrote")
            assert answers == dict.fromkeys(answers, expected_forbidden), (case.name, answers)
    finally:
        server.shutdown()
        thread.join(5)
