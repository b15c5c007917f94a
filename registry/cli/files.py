"""Reading the files people name on the command line, with one message style for every path
that cannot be used: missing, a folder, empty, unreadable or not text."""

from __future__ import annotations

import os
from pathlib import Path

from registry.errors import UserError


def require_file(path: str | os.PathLike[str], what: str) -> Path:
    """The path of a regular, non-empty file, or a one-line error naming the path and `what`
    was expected there (`--manifest`, `DOCUMENT`, `schema` ...)."""
    file = Path(path)
    place = str(path)
    if file.is_dir():
        raise UserError(f"is a folder; {what} must be a file", place=place)
    if not file.exists():
        raise UserError(f"no such file (for {what})", place=place)
    try:
        size = file.stat().st_size
    except OSError as error:
        raise UserError(f"cannot be read ({error.strerror}) (for {what})", place=place) from None
    if size == 0 and file.is_file():
        raise UserError(f"is empty; {what} cannot be an empty file", place=place)
    return file


def read_file_bytes(path: str | os.PathLike[str], what: str) -> bytes:
    file = require_file(path, what)
    try:
        content = file.read_bytes()
    except OSError as error:
        raise UserError(f"cannot be read ({error.strerror}) (for {what})",
                        place=str(path)) from None
    if not content.strip():
        raise UserError(f"holds only white space; {what} cannot be empty", place=str(path))
    return content


def read_file_text(path: str | os.PathLike[str], what: str) -> str:
    try:
        return read_file_bytes(path, what).decode("utf-8")
    except UnicodeDecodeError:
        raise UserError(f"is not UTF-8 text (for {what})", place=str(path)) from None
