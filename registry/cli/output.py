"""How commands report: exactly one JSON document with --json, plain text otherwise."""

from __future__ import annotations

import json
from collections.abc import Callable
from typing import Any

import click

from registry.plain import to_plain


def emit(document: Any, as_json: bool, render_text: Callable[[Any], str] | None = None) -> None:
    """Print one report: the JSON document, or its text rendering for a person.

    The renderer always gets the plain JSON form, so a report fetched from a remote catalogue
    renders exactly like one computed here. An answer of the catalogue client
    (registry.cli.answers) prints its document."""
    if callable(getattr(document, "to_json", None)):
        document = document.to_json()
    plain = to_plain(document)
    if as_json:
        click.echo(json.dumps(plain, indent=2, sort_keys=False, allow_nan=False, default=str))
        return
    if render_text is not None:
        text = render_text(plain)
    else:
        text = json.dumps(plain, indent=2, default=str)
    click.echo(text.rstrip("\n"))


def json_option(function: Callable[..., Any]) -> Callable[..., Any]:
    """The --json flag every reporting command takes."""
    return click.option("--json", "as_json", is_flag=True,
                        help="Print exactly one JSON document on stdout.")(function)


def emit_error(kind: str, message: str, place: str | None, exit_code: int, *,
               as_json: bool) -> None:
    """One line on stderr; under --json also `{"error": {...}}` as the one document on stdout."""
    text = " ".join(str(message).split())
    click.echo(f"lockkeeper: {place}: {text}" if place else f"lockkeeper: {text}", err=True)
    if as_json:
        click.echo(json.dumps({"error": {"kind": kind, "message": text, "place": place,
                                         "exit_code": exit_code}}, indent=2))


def warn(message: str) -> None:
    """A note for the person at the terminal, on stderr so JSON on stdout stays clean."""
    click.echo(message, err=True)


def short_time(iso_time: str) -> str:
    """A stored ISO time for a person: to the second, in UTC, with its offset written `Z`."""
    from datetime import UTC, datetime

    try:
        moment = datetime.fromisoformat(iso_time)
    except (TypeError, ValueError):
        return str(iso_time)
    if moment.tzinfo is None:
        moment = moment.replace(tzinfo=UTC)
    return moment.astimezone(UTC).strftime("%Y-%m-%d %H:%M:%SZ")


def listing(items: list[Any], when_empty: str, line: Callable[[Any], str]) -> str:
    """One line per item, or a sentence saying there are none."""
    return "\n".join(line(item) for item in items) if items else when_empty
