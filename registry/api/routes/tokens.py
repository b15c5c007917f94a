"""Bearer tokens (admins): listed, created (the secret is in this one response only), revoked."""

from __future__ import annotations

from flask import g

from registry.api.bodies import NAME, TEXT, json_body, strict_object
from registry.api.context import catalogue
from registry.api.rendering import json_response
from registry.api.routing import route
from registry.service import tokens
from registry.service.actors import ROLES

CREATE_TOKEN_BODY = strict_object({
    "user": NAME, "role": {"type": "string", "enum": list(ROLES)},
    "expires": {"type": "string", "maxLength": 40}, "label": TEXT}, ("user", "role"))


@route("/tokens", "GET", action="token.list", summary="Every token (never a secret)", tag="tokens",
       is_read=False)
def list_tokens():
    return json_response({"tokens": tokens.list_tokens(catalogue(), g.actor)})


@route("/tokens", "POST", action="token.create", summary="Make a token; its secret is shown once",
       tag="tokens", body=CREATE_TOKEN_BODY, responses={201: "Created"})
def create_token():
    body = json_body(CREATE_TOKEN_BODY)
    created = tokens.create_token(catalogue(), body["user"], body["role"], g.actor,
                                  expires_at=tokens.parse_expiry(body.get("expires")),
                                  label=body.get("label", ""))
    return json_response(created, 201, {"Location": f"/api/v1/tokens/{created.token.id}"})


@route("/tokens/<number:token_id>", "DELETE", action="token.revoke", summary="Revoke a token",
       tag="tokens")
def revoke_token(token_id: int):
    return json_response(tokens.revoke_token(catalogue(), token_id, g.actor))
