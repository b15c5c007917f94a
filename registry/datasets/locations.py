"""Where a dataset's records live: files, folders (every data file below), globs, several paths.

Files are listed in a stable order (by their path relative to the common folder), each with the
`key=value` folders between its argument and itself, which give partition fields. Folders and
files whose names start with '.' or '_' are skipped (bookkeeping such as _SUCCESS), as
pyarrow's dataset discovery does. Symbolic links are followed; a link that leads back into a
folder being walked is an error, not an endless walk.
"""

from __future__ import annotations

import glob
import os
from collections.abc import Sequence
from dataclasses import dataclass
from urllib.parse import unquote

from registry.datasets.errors import DatasetFileError, EmptyDataset
from registry.errors import UserError

DATA_EXTENSIONS = (".avro", ".parquet", ".pq", ".csv")
IGNORED_PREFIXES = (".", "_")
GLOB_CHARACTERS = frozenset("*?[")


@dataclass(frozen=True)
class DataFile:
    """One file of a dataset: where it is, its name within the dataset, and its partition."""

    path: str
    relative_path: str  # with '/' separators, relative to the folder common to all arguments
    size: int
    partition: tuple[tuple[str, str], ...] = ()  # (key, value text) of each key=value folder


@dataclass(frozen=True)
class SourceFile:
    """What the catalogue records of each file a dataset was made from."""

    relative_path: str
    size: int
    sha256: str

    def to_dict(self) -> dict:
        return {"path": self.relative_path, "size": self.size, "sha256": self.sha256}

    @classmethod
    def from_dict(cls, data: dict) -> SourceFile:
        try:
            return cls(str(data["path"]), int(data["size"]), str(data["sha256"]))
        except (KeyError, TypeError, ValueError) as error:
            raise UserError(f"not a source file entry ({error!r})", place="sources") from None


@dataclass(frozen=True)
class DataFiles:
    """The files some arguments name, and whether they came from more than one plain file."""

    files: tuple[DataFile, ...]
    gathered: bool  # a folder, a glob or several paths: places name the file at fault


def is_glob(argument: str) -> bool:
    return any(character in GLOB_CHARACTERS for character in argument)


def find_data_files(arguments: Sequence[str], any_extension: bool = False) -> DataFiles:
    """The data files the arguments name, each once, in a stable order.

    Without `any_extension` (no --format given), a folder contributes only files whose
    extension says they hold data (.avro, .parquet, .pq, .csv)."""
    if not arguments:
        raise UserError("name a file, a folder or a glob", place="PATH")
    found: list[tuple[str, str, tuple[tuple[str, str], ...]]] = []  # path, root, partition
    for argument in arguments:
        if is_glob(argument) and not os.path.lexists(argument):
            matches = sorted(glob.glob(argument, recursive=True))
            if not matches:
                raise UserError("the pattern matches no file", place=argument)
            root = _fixed_prefix(argument)
            for match in matches:
                found.extend(_files_of(match, root, any_extension=True))
        else:
            _check_exists(argument)
            root = argument if os.path.isdir(argument) else os.path.dirname(argument) or "."
            mine = list(_files_of(argument, root, any_extension))
            if not mine:
                raise EmptyDataset("the folder holds no data files", place=argument)
            found.extend(mine)
    if not found:
        raise EmptyDataset("no data files", place=" ".join(arguments))
    base = os.path.commonpath([os.path.abspath(root) for _, root, _ in found])
    files: dict[str, DataFile] = {}
    for path, _, partition in found:
        real = os.path.realpath(path)
        if real in files:
            continue  # named twice (overlapping arguments): its records count once
        relative = os.path.relpath(os.path.abspath(path), base).replace(os.sep, "/")
        files[real] = DataFile(path, relative, os.path.getsize(path), partition)
    ordered = tuple(sorted(files.values(), key=lambda f: f.relative_path))
    gathered = len(arguments) > 1 or not os.path.isfile(arguments[0])
    return DataFiles(ordered, gathered)


def _check_exists(path: str) -> None:
    try:
        os.stat(path)
    except OSError as error:
        if error.errno == 40:  # ELOOP: the link leads to itself, directly or through others
            raise DatasetFileError("a symbolic link loop", place=path) from None
        if os.path.islink(path):
            raise DatasetFileError("a symbolic link that leads nowhere", place=path) from None
        raise DatasetFileError("no such file or folder", place=path) from None


def _fixed_prefix(pattern: str) -> str:
    """The folder before the first segment holding a wildcard: partitions are read below it."""
    fixed = []
    for segment in pattern.split(os.sep):
        if is_glob(segment):
            break
        fixed.append(segment)
    return os.sep.join(fixed) or "."


def _files_of(path: str, root: str, any_extension: bool):
    if not os.path.isdir(path):
        _check_exists(path)
        yield path, root, partition_of(path, root)
        return
    yield from _walk(path, root, any_extension, ancestors=(os.path.realpath(path),))


def _walk(folder: str, root: str, any_extension: bool, ancestors: tuple[str, ...]):
    try:
        entries = sorted(os.scandir(folder), key=lambda entry: entry.name)
    except OSError as error:
        raise DatasetFileError(f"the folder cannot be read ({error.strerror})",
                               place=folder) from None
    for entry in entries:
        if entry.name.startswith(IGNORED_PREFIXES):
            continue
        _check_exists(entry.path)
        if entry.is_dir():  # follows links
            real = os.path.realpath(entry.path)
            if real in ancestors:
                raise DatasetFileError("a symbolic link loop: the folder leads back to "
                                       f"{os.path.relpath(real, os.path.realpath(root))!r}",
                                       place=entry.path)
            yield from _walk(entry.path, root, any_extension, ancestors + (real,))
        elif any_extension or entry.name.lower().endswith(DATA_EXTENSIONS):
            yield entry.path, root, partition_of(entry.path, root)


def partition_of(path: str, root: str) -> tuple[tuple[str, str], ...]:
    """The (key, value) of each `key=value` folder between root and the file (percent-escapes
    decoded, as Hive and pyarrow's hive partitioning write them)."""
    relative = os.path.relpath(os.path.dirname(os.path.abspath(path)), os.path.abspath(root))
    pairs: list[tuple[str, str]] = []
    if relative == ".":
        return ()
    for segment in relative.split(os.sep):
        key, equals, value = segment.partition("=")
        if not equals or not key:
            continue
        key = unquote(key)
        if any(key == seen for seen, _ in pairs):
            raise UserError(f"the partition key {key!r} appears twice in the path",
                            place=os.path.dirname(path))
        pairs.append((key, unquote(value)))
    return tuple(pairs)
