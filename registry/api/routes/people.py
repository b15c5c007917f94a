"""Roles of the people who act on the catalogue: listed, granted and revoked (admins)."""

from __future__ import annotations

from flask import g

from registry.api.bodies import json_body, strict_object
from registry.api.context import catalogue
from registry.api.rendering import json_response, path_name
from registry.api.routing import route
from registry.service import roles
from registry.service.actors import ROLES

GRANT_BODY = strict_object({"role": {"type": "string", "enum": list(ROLES)}}, ("role",))


@route("/users", "GET", summary="Every user with a role, and the roles", tag="users")
def list_users():
    return json_response({"users": roles.list_roles(catalogue())})


@route("/users/<user>/roles", "POST", action="role.grant", summary="Give a user a role",
       tag="users", body=GRANT_BODY)
def grant_role(user: str):
    body = json_body(GRANT_BODY)
    return json_response(roles.grant_role(catalogue(), path_name(user, "user"), body["role"],
                                          g.actor))


@route("/users/<user>/roles/<role>", "DELETE", action="role.revoke",
       summary="Take a role away from a user", tag="users")
def revoke_role(user: str, role: str):
    return json_response(roles.revoke_role(catalogue(), path_name(user, "user"),
                                           path_name(role, "role"), g.actor))
