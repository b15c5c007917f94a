"""`lockkeeper key create|list|rotate`: the catalogue's signing key."""

from __future__ import annotations

import click

from registry.cli.output import emit, json_option


def _context():
    return click.get_current_context().obj


def _actor():
    from registry.service.roles import load_actor

    context = _context()
    return load_actor(context.catalogue(), context.user)


@click.group()
def key() -> None:
    """The catalogue's signing key: its private half in a file, its public half in the catalogue."""


@key.command("create")
@json_option
def key_create(as_json: bool) -> None:
    """Make the signing key file (LOCKKEEPER_SIGNING_KEY, or beside the catalogue) and record
    its public key (needs admin)."""
    from registry.service.signing_keys import create_key

    _context().local_only("key create")
    created = create_key(_context().catalogue(), _actor())
    emit(created, as_json, lambda d: f"signing key {d['id']} "
         f"{'created in' if d['created_file'] else 'taken from'} {d['file']}")


@key.command("rotate")
@json_option
def key_rotate(as_json: bool) -> None:
    """Retire the current signing key and make a new one current (needs admin)."""
    from registry.service.signing_keys import rotate_key

    _context().local_only("key rotate")
    rotated = rotate_key(_context().catalogue(), _actor())
    emit(rotated, as_json, lambda d: f"signing key {d['id']} is current in {d['file']}"
         + (f"; {d['retired']} retired" if d["retired"] else ""))


@key.command("list")
@json_option
def key_list(as_json: bool) -> None:
    """Every public key the catalogue has had, the current one last."""
    found = _context().client().list_keys()

    def text(d):
        if not d["keys"]:
            return "no signing key: nothing is signed (`lockkeeper key create` makes one)"
        return "\n".join(f"{k['id']}  {k['algorithm']}  created {k['created_at']}"
                         + (f"  retired {k['retired_at']}" if k["retired_at"] else "  current")
                         for k in d["keys"])

    emit(found, as_json, text)


# `key public` lives with the release commands, which are what a serving side verifies with.
from registry.cli.release_commands import key_public  # noqa: E402

key.add_command(key_public)
