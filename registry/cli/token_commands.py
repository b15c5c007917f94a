"""`lockkeeper token create|revoke|list`: bearer tokens for the HTTP API (admins only)."""

from __future__ import annotations

import click

from registry.cli.catalogue_commands import _actor, _context
from registry.cli.lazy_group import LazyGroup
from registry.cli.output import emit, json_option, listing, short_time, warn
from registry.cli.params import SuggestingChoice
from registry.service import tokens
from registry.service.actors import ROLES


@click.group("token", cls=LazyGroup)
def token_group() -> None:
    """Bearer tokens for the HTTP API, kept in the catalogue only as hashes."""


@token_group.command("create")
@click.option("--user", "user", required=True, help="Whom the token acts for.")
@click.option("--role", "role", required=True, type=SuggestingChoice(list(ROLES)),
              help="The one role the token acts with (the user must hold it).")
@click.option("--expires", default=None, metavar="30d|12h|ISO-DATE",
              help="When the token stops working (default: never).")
@click.option("--label", default="", help="What the token is for, e.g. the pipeline using it.")
@json_option
def token_create(user: str, role: str, expires: str | None, label: str, as_json: bool) -> None:
    """Make a token; its secret is printed once and cannot be shown again."""
    remote = _context().remote()
    if remote:
        created = remote.create_token(user, role, expires, label)
    else:
        created = tokens.create_token(_context().catalogue(), user, role, _actor(),
                                      expires_at=tokens.parse_expiry(expires), label=label)
    if not as_json:
        warn("keep this secret now: the catalogue stores only its hash")
    emit(created, as_json, lambda c: c["secret"])


@token_group.command("revoke")
@click.argument("token_id", metavar="ID", type=int)
@json_option
def token_revoke(token_id: int, as_json: bool) -> None:
    """Stop token ID from working, from the next request on."""
    remote = _context().remote()
    record = (remote.revoke_token(token_id) if remote
              else tokens.revoke_token(_context().catalogue(), token_id, _actor()))
    emit(record, as_json, lambda r: f"token {r['id']} ({r['user']}, {r['role']}) revoked")


@token_group.command("list")
@json_option
def token_list(as_json: bool) -> None:
    """Every token: user, role, label, expiry, revocation (never the secret)."""
    remote = _context().remote()
    found = (remote.list_tokens() if remote
             else {"tokens": tokens.list_tokens(_context().catalogue(), _actor())})

    def standing(record) -> str:
        if record["revoked_at"]:
            return "revoked"
        return (f"expires {short_time(record['expires_at'])}" if record["expires_at"]
                else "no expiry")

    emit(found, as_json, lambda d: listing(
        d["tokens"], "no tokens", lambda r: f"{r['id']:>4}  {r['user']:<20} {r['role']:<10} "
                                            f"{standing(r)}  {r['label']}"))
