"""Uploaded files that a reader needs on disk (dataset files, predictions), each in a private
temporary folder removed after the request, under its own plain base name."""

from __future__ import annotations

import re
import tempfile
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path, PurePosixPath, PureWindowsPath
from typing import overload

from flask import request
from werkzeug.datastructures import FileStorage

from registry.errors import LockkeeperError, UserError

SAFE_NAME = re.compile(r"[^A-Za-z0-9._-]+")


def safe_file_name(filename: str | None, fallback: str) -> str:
    """The base name of an uploaded file, never a path: `../../x.csv` becomes `x.csv`."""
    name = PureWindowsPath(PurePosixPath(filename or "").name).name
    name = SAFE_NAME.sub("_", name).lstrip(".")[:100]
    return name or fallback


def file_part(name: str) -> FileStorage:
    upload = request.files.get(name)
    if upload is None:
        raise UserError(f"the upload has no file part {name!r}", place=name)
    return upload


@contextmanager
def saved_upload(upload: FileStorage, fallback: str) -> Iterator[Path]:
    """The upload as a file; errors that name the temporary path name the upload instead."""
    with tempfile.TemporaryDirectory(prefix="lockkeeper-upload-") as folder:
        path = Path(folder) / safe_file_name(upload.filename, fallback)
        upload.save(path)
        try:
            yield path
        except LockkeeperError as error:
            error.message = error.message.replace(str(path), path.name).replace(folder, "")
            if error.place:
                error.place = error.place.replace(str(path), path.name).replace(folder, "")
            raise


def form_values(name: str) -> tuple[str, ...]:
    return tuple(value for value in request.form.getlist(name) if value != "")


@overload
def form_value(name: str) -> str | None: ...


@overload
def form_value(name: str, default: str) -> str: ...


def form_value(name: str, default: str | None = None) -> str | None:
    values = request.form.getlist(name)
    if len(values) > 1:
        raise UserError(f"the field {name!r} is given {len(values)} times", place=name)
    return values[0] if values and values[0] != "" else default
