"""`lockkeeper document get`: a stored document, written atomically and checked on arrival.

The bytes go to a temporary file beside the target, hashed as they arrive; only when their
SHA-256 is the one the catalogue names does the file take its final name (a rename, so a
server watching the folder never sees half a document).
"""

from __future__ import annotations

import hashlib
import os
import tempfile
from collections.abc import Iterable
from contextlib import nullcontext
from pathlib import Path

import click

from registry.cli.output import emit, json_option
from registry.cli.params import split_model_optional_version
from registry.cli.progress import progress_bar
from registry.errors import Refusal, UserError

LARGE = 8 * 1024 * 1024  # bytes: smaller documents arrive too fast for a bar to help


def write_checked(chunks: Iterable[bytes], target: Path, expected_sha256: str,
                  size: int | None) -> int:
    """Write `chunks` to `target` atomically, refusing bytes whose SHA-256 is not expected."""
    folder = target.parent if str(target.parent) else Path(".")
    if not folder.is_dir():
        raise UserError(f"no such folder: {folder}", place="--output")
    digest, written = hashlib.sha256(), 0
    try:
        handle = tempfile.NamedTemporaryFile(dir=folder, prefix=f".{target.name}.",
                                             suffix=".part", delete=False)
    except OSError as error:
        raise UserError(f"cannot write in {folder}: {error.strerror}", place="--output") from None
    temporary = Path(handle.name)
    try:
        # A bar only for large documents, and only when a person watches (registry.cli.progress).
        bar = (progress_bar("fetching", size, unit="bytes") if (size or 0) >= LARGE
               else nullcontext())
        with handle, bar as advance:
            for chunk in chunks:
                handle.write(chunk)
                digest.update(chunk)
                written += len(chunk)
                if advance is not None:
                    advance(len(chunk))
            handle.flush()
            os.fsync(handle.fileno())
        if digest.hexdigest() != expected_sha256:
            raise Refusal(f"the bytes received have SHA-256 {digest.hexdigest()}, not "
                          f"{expected_sha256}; nothing was written", place=str(target))
        os.replace(temporary, target)
    finally:
        temporary.unlink(missing_ok=True)
    return written


@click.command("get")
@click.argument("model_name", metavar="MODEL")
@click.argument("version", required=False, metavar="[VERSION]")
@click.option("--stage", default=None, help="The document of the version holding this stage.")
@click.option("-o", "--output", "output", required=True, type=click.Path(dir_okay=False),
              help="The file to write (replaced atomically).")
@json_option
def document_get(model_name: str, version: str | None, stage: str | None, output: str,
                 as_json: bool) -> None:
    """Fetch a version's document (MODEL VERSION, or MODEL@N), or that of a stage's holder
    (MODEL --stage live), byte for byte as registered."""
    model, number = split_model_optional_version(model_name, version)
    if (number is None) == (stage is None):
        raise UserError("give a VERSION or --stage, not both", place="--stage")
    context = click.get_current_context().obj
    target = Path(output)
    found = context.client().document(model, version=number, stage=stage)
    written = write_checked(found.chunks, target, found.sha256, found.size)
    result = {"model": model, "version": found.version, "stage": stage, "sha256": found.sha256,
              "size": written, "path": str(target)}
    emit(result, as_json, lambda r: f"wrote {r['size']} bytes of {r['model']}"
         + (f" v{r['version']}" if r["version"] else f" ({r['stage']})")
         + f" to {r['path']} (sha256 {r['sha256']})")


