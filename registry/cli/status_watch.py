"""`lockkeeper status MODEL --watch`: print who holds each stage, then each change as it
happens.

How the changes are noticed is the catalogue client's business (CatalogueClient.watch_status):
here they are filtered to moves of a stage and printed.
"""

from __future__ import annotations

import json
from datetime import UTC, datetime
from typing import TYPE_CHECKING

import click

if TYPE_CHECKING:
    from registry.cli.client import CatalogueClient


def _moves(before: dict, after: dict) -> list[str]:
    lines = []
    for stage, numbers in after["stages"].items():
        old = before["stages"].get(stage, [])
        if old != numbers:
            lines.append(f"{stage}: {_held(old)} -> {_held(numbers)}")
    return lines


def _held(numbers: list[int]) -> str:
    return ", ".join(f"v{n}" for n in numbers) or "-"


def watch_status(client: CatalogueClient, model: str, as_json: bool,
                 changes: int | None) -> None:
    previous = None
    printed = 0
    try:
        for answer in client.watch_status(model):
            document = answer.to_json()
            if previous is not None and document["stages"] == previous["stages"]:
                continue  # something else changed in the catalogue
            at = datetime.now(UTC).isoformat(timespec="seconds").replace("+00:00", "Z")
            if as_json:
                click.echo(json.dumps({"at": at, **document}), nl=True)
            elif previous is None:
                click.echo(f"{document['model']} at {at}:")
                for stage, numbers in document["stages"].items():
                    click.echo(f"  {stage:<10} {_held(numbers)}")
            else:
                for line in _moves(previous, document):
                    click.echo(f"{at}  {line}")
            if previous is not None:
                printed += 1
                if changes is not None and printed >= changes:
                    return
            previous = document
    except KeyboardInterrupt:
        return
