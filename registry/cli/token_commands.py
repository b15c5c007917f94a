"""`lockkeeper token create|revoke|list`: bearer tokens for the HTTP API (admins only)."""

from __future__ import annotations

import click

from registry.cli.catalogue_commands import ROLE_NAMES, _client
from registry.cli.lazy_group import LazyGroup
from registry.cli.output import emit, json_option, listing, short_time, warn
from registry.cli.params import SuggestingChoice


@click.group("token", cls=LazyGroup)
def token_group() -> None:
    """Bearer tokens for the HTTP API, kept in the catalogue only as hashes."""


@token_group.command("create")
@click.option("--user", "user", required=True, help="Whom the token acts for.")
@click.option("--role", "role", required=True, type=SuggestingChoice(ROLE_NAMES),
              help="The one role the token acts with (the user must hold it).")
@click.option("--expires", default=None, metavar="30d|12h|ISO-DATE",
              help="When the token stops working (default: never).")
@click.option("--label", default="", help="What the token is for, e.g. the pipeline using it.")
@json_option
def token_create(user: str, role: str, expires: str | None, label: str, as_json: bool) -> None:
    """Make a token; its secret is printed once and cannot be shown again."""
    created = _client().create_token(user, role, expires, label)
    if not as_json:
        warn("keep this secret now: the catalogue stores only its hash")
    emit(created, as_json, lambda c: c["secret"])


@token_group.command("revoke")
@click.argument("token_id", metavar="ID", type=int)
@json_option
def token_revoke(token_id: int, as_json: bool) -> None:
    """Stop token ID from working, from the next request on."""
    record = _client().revoke_token(token_id)
    emit(record, as_json, lambda r: f"token {r['id']} ({r['user']}, {r['role']}) revoked")


@token_group.command("list")
@json_option
def token_list(as_json: bool) -> None:
    """Every token: user, role, label, expiry, revocation (never the secret)."""
    found = _client().list_tokens()

    def standing(record) -> str:
        if record["revoked_at"]:
            return "revoked"
        return (f"expires {short_time(record['expires_at'])}" if record["expires_at"]
                else "no expiry")

    emit(found, as_json, lambda d: listing(
        d["tokens"], "no tokens", lambda r: f"{r['id']:>4}  {r['user']:<20} {r['role']:<10} "
                                            f"{standing(r)}  {r['label']}"))
