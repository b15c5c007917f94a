"""Who is calling: the bearer token of the request. Whether the caller may act is the service's
one authorisation rule (registry.service.authorisation), never decided here.

Reads need a token of any role unless the app is configured with LOCKKEEPER_OPEN_READS=True;
then a request without a token reads as the user `anonymous` (a token, when sent, still counts).
"""

from __future__ import annotations

from flask import current_app, request

from registry.api.context import cached_reads, generation
from registry.service.actors import Actor
from registry.service.tokens import Unauthenticated

ANONYMOUS = Actor(name="anonymous", roles=frozenset({"reader"}))


def bearer_secret() -> str | None:
    header = request.headers.get("Authorization")
    if header is None:
        return None
    scheme, _, secret = header.partition(" ")
    if scheme.lower() != "bearer" or not secret.strip():
        raise Unauthenticated("the Authorization header must be `Bearer <token>`",
                              place="Authorization")
    return secret.strip()


def authenticate(*, is_read: bool) -> Actor:
    """The acting user with the role of their token, or Unauthenticated (401)."""
    secret = bearer_secret()
    if secret is None:
        if is_read and current_app.config.get("LOCKKEEPER_OPEN_READS"):
            return ANONYMOUS
        raise Unauthenticated("this operation needs a bearer token "
                              "(`lockkeeper token create`)", place="Authorization")
    return cached_reads().authenticate(secret, generation())
