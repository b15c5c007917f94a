"""The role matrix: every write endpoint under every role, and nothing stored when refused.

Roles do not imply each other (registry.service.actors): an admin manages models, policies,
roles and tokens, but neither publishes nor approves, so four eyes always means two approvers.
"""

from __future__ import annotations

import functools
import io
from collections.abc import Callable
from dataclasses import dataclass

import pytest

from registry.cli.demo import BRACKWATER

from tests.api.api_helpers import HOLDERS, problem, set_up_model

DATA = BRACKWATER / "datasets"

ROLES = (None, "reader", "publisher", "approver", "admin")


@dataclass(frozen=True)
class Write:
    name: str
    allowed: tuple[str, ...]
    set_up: Callable  # (api, tmp_path, model) -> None, once per role on a model of its own
    call: Callable    # (api, role, model) -> response


def _model(api, tmp_path, model):
    set_up_model(api, tmp_path, model, {"live": ["reads-live-feed"]})


def _with_version(api, tmp_path, model):
    _model(api, tmp_path, model)
    assert api.register(model, tmp_path / model).status_code == 201


def _with_failing_shadow_gate(api, tmp_path, model):
    set_up_model(api, tmp_path, model, {"shadow": ["lineage-complete"]})
    assert api.register(model, tmp_path / model).status_code == 201


def _with_two_live(api, tmp_path, model):
    _model(api, tmp_path, model)
    api.register(model, tmp_path / model, tag="v1")
    api.register(model, tmp_path / model, tag="v2")
    for version in (1, 2):
        assert api.post(f"/models/{model}/versions/{version}/promote", {"stage": "live"},
                        role="approver").json["moved"]


def _nothing(api, tmp_path, model):
    pass


def _token_to_revoke(api, tmp_path, model):
    made = api.post("/tokens", {"user": "ines.okafor", "role": "reader", "label": model})
    assert made.status_code == 201


def _revoke_token(api, role, model):
    listed = api.get("/tokens", role="admin").json["tokens"]
    token_id = next(t["id"] for t in listed if t["label"] == model)
    return api.delete(f"/tokens/{token_id}", role=role)


@functools.lru_cache(maxsize=1)
def _live_sample_fingerprint() -> dict:
    from registry.datasets import fingerprint_file

    return fingerprint_file(str(DATA / "brackwater-live-sample.avro"), schema_json=None).to_dict()


def _with_version_and_evaluation_set(api, tmp_path, model):
    _with_version(api, tmp_path, model)
    if api.get("/datasets/evaluation").status_code == 404:
        assert api.post("/datasets", role="publisher", content_type="multipart/form-data", data={
            "name": "evaluation", "role": "evaluation", "key": "segment_id",
            "file": (io.BytesIO((DATA / "brackwater-evaluation-set.parquet").read_bytes()),
                     "evaluation.parquet")}).status_code == 201


def _evaluate(api, role, model):
    predictions = (DATA.parent / "predictions" / "main-burst-risk-v1.csv").read_bytes()
    return api.post(f"/models/{model}/versions/1/evaluations", role=role,
                    content_type="multipart/form-data",
                    data={"dataset": "evaluation",
                          "predictions": (io.BytesIO(predictions), "v1.csv")})


WRITES = [
    Write("create model", ("admin",), _nothing,
          lambda api, role, model: api.post("/models", {"name": model}, role=role)),
    Write("set policy", ("admin",), _model,
          lambda api, role, model: api.put(f"/models/{model}/policy",
                                           {"policy": "[stages.live]\nexclusive = true\n"},
                                           role=role)),
    Write("register", ("publisher",), _model,
          lambda api, role, model: api.register(model, api_tmp[0] / model, role=role)),
    Write("promote into an unguarded stage", ("publisher", "approver"), _with_version,
          lambda api, role, model: api.post(f"/models/{model}/versions/1/promote",
                                            {"stage": "shadow"}, role=role)),
    Write("promote into a guarded stage", ("approver",), _with_version,
          lambda api, role, model: api.post(f"/models/{model}/versions/1/promote",
                                            {"stage": "live"}, role=role)),
    Write("promote with a waiver", ("approver",), _with_failing_shadow_gate,
          lambda api, role, model: api.post(
              f"/models/{model}/versions/1/promote",
              {"stage": "shadow", "waivers": [{"gate": "lineage-complete", "reason": "test"}]},
              role=role)),
    Write("approve", ("approver",), _with_version,
          lambda api, role, model: api.post(f"/models/{model}/versions/1/approve",
                                            {"stage": "live"}, role=role)),
    Write("roll back a guarded stage", ("approver",), _with_two_live,
          lambda api, role, model: api.post(f"/models/{model}/stages/live/rollback", role=role)),
    Write("retire a candidate", ("publisher", "approver"), _with_version,
          lambda api, role, model: api.post(f"/models/{model}/versions/1/retire", role=role)),
    Write("grant a role", ("admin",), _nothing,
          lambda api, role, model: api.post(f"/users/{model}/roles", {"role": "publisher"},
                                            role=role)),
    Write("revoke a role", ("admin",),
          lambda api, tmp_path, model: api.post(f"/users/{model}/roles", {"role": "publisher"}),
          lambda api, role, model: api.delete(f"/users/{model}/roles/publisher", role=role)),
    Write("create a token", ("admin",), _nothing,
          lambda api, role, model: api.post("/tokens", {"user": "ines.okafor",
                                                        "role": "reader"}, role=role)),
    Write("revoke a token", ("admin",), _token_to_revoke, _revoke_token),
    Write("register a dataset", ("publisher",), _nothing,
          lambda api, role, model: api.post("/datasets", {
              "name": model, "fingerprint": _live_sample_fingerprint()}, role=role)),
    Write("add an evaluation", ("publisher",), _with_version_and_evaluation_set, _evaluate),
    Write("recall a dataset", ("publisher", "approver"),
          lambda api, tmp_path, model: api.post("/datasets", {
              "name": model, "fingerprint": _live_sample_fingerprint()}, role="publisher"),
          lambda api, role, model: api.post(f"/datasets/{model}/recall",
                                            {"reason": "sensor calibration fault"}, role=role)),
]
api_tmp: list = [None]  # the test's tmp_path, for the register call


def _events(api) -> int:
    return api.get("/audit/verify", role="admin").json["events"]


@pytest.mark.parametrize("write", WRITES, ids=[w.name for w in WRITES])
def test_every_write_checks_the_role_of_the_token(api, tmp_path, write):
    api_tmp[0] = tmp_path
    models = {role: f"m-{role or 'anonymous'}" for role in ROLES}
    for role in ROLES:
        write.set_up(api, tmp_path, models[role])
    for role in ROLES:
        before = _events(api)
        response = write.call(api, role, models[role])
        if role in write.allowed:
            assert 200 <= response.status_code < 300, (role, response.data)
            assert _events(api) > before
        else:
            expected = 401 if role is None else 403
            assert response.status_code == expected, (role, response.data)
            assert problem(response)["type"].endswith(
                "/unauthenticated" if role is None else "/forbidden")
            assert _events(api) == before, f"{role} changed the catalogue"


def test_reads_need_a_token_unless_the_app_opens_them(api, cli):
    from tests.api.api_helpers import make_api

    assert api.get("/models", role=None).status_code == 401
    assert api.get("/models", role="reader").status_code == 200
    assert api.get("/tokens", role="reader").status_code == 403
    opened = make_api(cli, config={"LOCKKEEPER_OPEN_READS": True})
    assert opened.get("/models", role=None).status_code == 200
    # Open reads are for reading only.
    assert opened.post("/models", {"name": "x"}, role=None).status_code == 401


def test_the_audit_log_records_the_tokens_user(api, catalogue):
    from sqlalchemy import select

    from registry.store import tables as t

    assert api.post("/models", {"name": "audited"}).status_code == 201
    with catalogue.sessions() as session:
        event = session.execute(select(t.AuditEvent).where(
            t.AuditEvent.action == "model.create")).scalar_one()
    assert event.actor == HOLDERS["admin"]
