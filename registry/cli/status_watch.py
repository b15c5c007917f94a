"""`lockkeeper status MODEL --watch`: print who holds each stage, then each change as it
happens.

Locally it reads the audit head a few times a second (every change moves it) and reads the
status only when the head moved; against a server it holds one request open at a time with
`?wait=` until the status changes.
"""

from __future__ import annotations

import json
import time
from collections.abc import Iterator
from datetime import UTC, datetime

import click

LOCAL_POLL_INTERVAL = 0.25  # seconds
SERVER_WAIT = 55            # seconds a request is held open, within the server's 60


def _local_changes(context, model: str) -> Iterator[dict]:
    from registry.service import stages
    from registry.service.cached_reads import CachedReads

    catalogue = context.catalogue()
    reads = CachedReads(catalogue)
    try:
        seen_at = reads.generation()
        yield stages.status(catalogue, model)
        while True:
            time.sleep(LOCAL_POLL_INTERVAL)
            head = reads.generation()
            if head != seen_at:
                seen_at = head
                yield stages.status(catalogue, model)
    finally:
        reads.close()


def _remote_changes(remote, model: str) -> Iterator[dict]:
    document, etag = remote.status_when_changed(model, None, 0)
    yield document
    while True:
        changed, etag = remote.status_when_changed(model, etag, SERVER_WAIT)
        if changed is not None:
            yield changed


def _moves(before: dict, after: dict) -> list[str]:
    lines = []
    for stage, numbers in after["stages"].items():
        old = before["stages"].get(stage, [])
        if old != numbers:
            lines.append(f"{stage}: {_held(old)} -> {_held(numbers)}")
    return lines


def _held(numbers: list[int]) -> str:
    return ", ".join(f"v{n}" for n in numbers) or "-"


def watch_status(context, model: str, as_json: bool, changes: int | None) -> None:
    remote = context.remote()
    documents = _remote_changes(remote, model) if remote else _local_changes(context, model)
    previous = None
    printed = 0
    try:
        for document in documents:
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
