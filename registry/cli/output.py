"""How commands report: exactly one JSON document with --json, plain text otherwise."""

from __future__ import annotations

import json
import sys
from collections.abc import Callable
from typing import Any

import click

from registry.plain import to_plain


def emit(document: Any, as_json: bool, render_text: Callable[[Any], str] | None = None) -> None:
    """Print one report: the JSON document, or its text rendering for a person.

    The renderer always gets the plain JSON form, so a report fetched from a remote catalogue
    renders exactly like one computed here."""
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


def warn(message: str) -> None:
    """A note for the person at the terminal, on stderr so JSON on stdout stays clean."""
    click.echo(message, err=True)


def stderr_is_terminal() -> bool:
    return sys.stderr.isatty()
