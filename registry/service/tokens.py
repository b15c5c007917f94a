"""Bearer tokens for the HTTP API: created, listed, revoked, and turned back into an actor.

The catalogue keeps only the SHA-256 of a token's secret; the secret is shown once, at creation.
A token carries one role, and acts with that role only while its user still holds it in the
catalogue, so revoking a role (or the token) takes effect on the next request.
"""

from __future__ import annotations

import hashlib
import hmac
import secrets
from dataclasses import dataclass
from datetime import UTC, datetime

from registry.errors import NotFound, Unauthenticated, UserError
from registry.moments import parse_moment, utc_iso
from registry.names import check_name
from registry.node_ids import user_id
from registry.service.actors import ROLES, Actor
from registry.service.authorisation import authorise, is_bootstrap, require_first_admin
from registry.store import tables as t
from registry.store.catalogue import Catalogue
from registry.store.unit_of_work import UnitOfWork, utc_now

# The prefix makes a leaked secret easy to recognise in logs and secret scanners.
SECRET_PREFIX = "lkt_"


@dataclass(frozen=True)
class TokenRecord:
    id: int
    user: str
    role: str
    label: str
    created_at: str
    created_by: str
    expires_at: str | None
    revoked_at: str | None


@dataclass(frozen=True)
class CreatedToken:
    token: TokenRecord
    secret: str  # shown once; the catalogue keeps only its hash


def hash_secret(secret: str) -> str:
    return hashlib.sha256(secret.encode("utf-8")).hexdigest()


def parse_expiry(text: str | None, *, now: datetime | None = None) -> datetime | None:
    """`30d`, `12h`, or an ISO 8601 date or time (UTC when no offset is given)."""
    if text is None or text == "":
        return None
    now = now or utc_now()
    moment = parse_moment(text, now=now, later=True, place="--expires", units="dh")
    if moment == now:
        raise UserError("an expiry of zero makes a token that never works", place="--expires")
    if moment <= now:
        raise UserError(f"expiry {text!r} is already past", place="--expires")
    return moment


def _record(row: t.ApiToken) -> TokenRecord:
    return TokenRecord(id=row.id, user=row.user, role=row.role, label=row.label,
                       created_at=utc_iso(row.created_at), created_by=row.created_by,
                       expires_at=utc_iso(row.expires_at) if row.expires_at else None,
                       revoked_at=utc_iso(row.revoked_at) if row.revoked_at else None)



def create_token(catalogue: Catalogue, user: str, role: str, actor: Actor, *,
                 expires_at: datetime | None = None, label: str = "") -> CreatedToken:
    """Make a token for `user` acting as `role`. Needs an admin, except that a catalogue with
    no admin yet accepts one admin token, whose user becomes the first admin (as `user grant`)."""
    check_name(user, what="user")
    if role not in ROLES:
        raise UserError(f"unknown role {role!r}; roles are {', '.join(ROLES)}", place="--role")
    secret = SECRET_PREFIX + secrets.token_urlsafe(32)
    with UnitOfWork(catalogue) as uow:
        require_first_admin(uow, role, place="--role")
        bootstrap = is_bootstrap(uow)
        authorise(uow, actor, "token.create", place="token")
        held = uow.roles.held_by(user)
        if bootstrap:
            uow.roles.grant(user, "admin", at=utc_now(), by=actor.name)
            uow.audit.append(actor.name, "role.grant", user_id(user),
                             {"role": "admin", "bootstrap": True})
        elif role != "reader" and role not in held:
            # A token never carries more than its user holds: the approval gates count only
            # approvers known to the catalogue.
            raise UserError(f"{user} does not hold the {role} role; grant it first with "
                            f"`lockkeeper user grant {user} {role}`", place="--role")
        row = t.ApiToken(token_hash=hash_secret(secret), user=user, role=role, label=label,
                         created_at=utc_now(), created_by=actor.name, expires_at=expires_at)
        uow.tokens.add(row)
        uow.audit.append(actor.name, "token.create", f"token/{row.id}", {
            "user": user, "role": role, "label": label,
            "expires_at": expires_at.isoformat() if expires_at else None})
        record = _record(row)
        uow.commit()
    return CreatedToken(token=record, secret=secret)


def revoke_token(catalogue: Catalogue, token_id: int, actor: Actor) -> TokenRecord:
    with UnitOfWork(catalogue) as uow:
        authorise(uow, actor, "token.revoke", place="token")
        row = uow.tokens.get(token_id)
        if row is None:
            raise NotFound(f"no token {token_id}", place="token")
        if row.revoked_at is None:
            row.revoked_at = utc_now()
            uow.tokens.save()
            uow.audit.append(actor.name, "token.revoke", f"token/{row.id}",
                             {"user": row.user, "role": row.role})
        record = _record(row)
        uow.commit()
    return record


def list_tokens(catalogue: Catalogue, actor: Actor) -> list[TokenRecord]:
    """Every token, never its secret (the catalogue does not have it)."""
    with UnitOfWork(catalogue, write=False) as uow:
        authorise(uow, actor, "token.list", place="token")
        return [_record(row) for row in uow.tokens.all()]


@dataclass(frozen=True)
class TokenStanding:
    """What a valid token stands for now, and until when (None: no expiry)."""

    actor: Actor
    expires_at: datetime | None

    def check_expiry(self, now: datetime) -> Actor:
        if self.expires_at is not None and self.expires_at <= now:
            raise Unauthenticated(f"the token expired at {self.expires_at.isoformat()}",
                                  place="Authorization")
        return self.actor


def authenticate(catalogue: Catalogue, secret: str, *, now: datetime | None = None) -> Actor:
    """The actor a bearer secret stands for, or Unauthenticated."""
    return token_standing(catalogue, secret).check_expiry(now or utc_now())


def token_standing(catalogue: Catalogue, secret: str) -> TokenStanding:
    """One indexed lookup by hash, then a constant-time comparison so timing says nothing
    about how close a guess came; refuses unknown and revoked tokens."""
    if not secret.startswith(SECRET_PREFIX) or len(secret) > 200:
        raise Unauthenticated("the bearer token is not one this catalogue issued",
                              place="Authorization")
    wanted = hash_secret(secret)
    with UnitOfWork(catalogue, write=False) as uow:
        row = uow.tokens.by_hash(wanted)
        stored = row.token_hash if row is not None else hash_secret("")
        if row is None or not hmac.compare_digest(stored, wanted):
            raise Unauthenticated("unknown bearer token", place="Authorization")
        if row.revoked_at is not None:
            raise Unauthenticated(f"token {row.id} was revoked", place="Authorization")
        expires_at = row.expires_at
        if expires_at is not None and expires_at.tzinfo is None:
            expires_at = expires_at.replace(tzinfo=UTC)  # SQLite hands back naive UTC
        held = uow.roles.held_by(row.user)
        user, role = row.user, row.role
    if not (role == "reader" or role in held):
        role = "reader"  # the user lost the role after the token was made: it may still read
    return TokenStanding(Actor(name=user, roles=frozenset({role})), expires_at)
