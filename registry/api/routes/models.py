"""Model lines: create, list, show, the policy, who holds each stage, and the history."""

from __future__ import annotations

from flask import Response, g

from registry.api.bodies import NAME, TEXT, json_body, strict_object
from registry.api.context import catalogue
from registry.api.rendering import json_response, path_name
from registry.api.routing import route
from registry.api.waiting import WAIT_PARAMETER, answer_when_changed, unchanged, wait_seconds
from registry.canonical_json import digest_of
from registry.service import models, policies, stages

CREATE_MODEL_BODY = strict_object({"name": NAME, "description": TEXT}, ("name",))
SET_POLICY_BODY = strict_object({"policy": TEXT}, ("policy",))


@route("/models", "GET", summary="Every model, its number of versions and who holds each stage",
       tag="models")
def list_models():
    return json_response({"models": models.list_models(catalogue())})


@route("/models", "POST", action="model.create", summary="Create a model line", tag="models",
       body=CREATE_MODEL_BODY, responses={201: "Created"})
def create_model():
    body = json_body(CREATE_MODEL_BODY)
    summary = models.create_model(catalogue(), body["name"], body.get("description", ""),
                                  g.actor)
    return json_response(summary, 201, {"Location": f"/api/v1/models/{summary.name}"})


@route("/models/<model>", "GET", summary="A model line and its versions", tag="models")
def show_model(model: str):
    return json_response(models.show_model(catalogue(), path_name(model, "model")))


@route("/models/<model>/policy", "GET", summary="The policy in force for a model", tag="models")
def show_policy(model: str):
    return json_response(policies.show_policy(catalogue(), path_name(model, "model")))


@route("/models/<model>/policy", "PUT", action="model.set-policy",
       summary="Give a model its own policy (TOML text, laid over the default)", tag="models",
       body=SET_POLICY_BODY)
def set_policy(model: str):
    body = json_body(SET_POLICY_BODY)
    return json_response(policies.set_policy(catalogue(), path_name(model, "model"),
                                             body["policy"], g.actor))


@route("/models/<model>/status", "GET", summary="Who holds each stage of a model (send "
       "If-None-Match with the last ETag and ?wait=SECONDS to be answered when it changes)",
       tag="models", query=(WAIT_PARAMETER,),
       responses={200: "OK", 304: "Not Modified: nobody moved", 400: "Bad wait",
                  503: "Too many requests already wait in this process (see Retry-After)"})
def model_status(model: str):
    name = path_name(model, "model")
    seconds = wait_seconds()
    document = answer_when_changed(lambda _at: stages.status(catalogue(), name), _status_tag,
                                   seconds)
    if isinstance(document, Response):
        return document
    headers = {"ETag": f'"{_status_tag(document)}"', "Cache-Control": "no-cache"}
    if unchanged(_status_tag(document)):
        return Response(status=304, headers=headers)
    return json_response(document, headers=headers)


def _status_tag(document: dict) -> str:
    return digest_of(document)[:32]


@route("/models/<model>/history", "GET", summary="Every stage event of a model, oldest first",
       tag="models")
def model_history(model: str):
    return json_response(stages.history(catalogue(), path_name(model, "model")))
