"""Reading an export folder without trusting it: no symbolic link is followed (the folder, its
sub-folders or any file), nothing but a regular file is opened, and every file's size is checked
against the size the manifest gives before a byte of it is read."""

from __future__ import annotations

import os
import stat
from pathlib import Path

from registry.errors import UserError

MAX_MANIFEST_BYTES = 4 * 1024 * 1024
NO_FOLLOW = os.O_NOFOLLOW | getattr(os, "O_CLOEXEC", 0)


class BadExport(UserError):
    """The export folder is missing, incomplete or changed since it was written."""


class ExportFolder:
    """An export folder opened once by descriptor, so a link swapped in later is not followed."""

    def __init__(self, folder: Path) -> None:
        self.folder = folder
        self._descriptors: dict[str, int] = {}
        self._descriptors[""] = self._open_directory(None, str(folder), "DIR")

    def close(self) -> None:
        for descriptor in self._descriptors.values():
            os.close(descriptor)
        self._descriptors.clear()

    def __enter__(self) -> ExportFolder:
        return self

    def __exit__(self, *_exc) -> None:
        self.close()

    def _open_directory(self, parent: int | None, name: str, place: str) -> int:
        try:
            descriptor = os.open(name, os.O_RDONLY | os.O_DIRECTORY | NO_FOLLOW, dir_fd=parent)
        except FileNotFoundError:
            raise BadExport(f"no such export folder: {self.folder / name if parent else name}",
                            place=place) from None
        except OSError as error:
            # O_NOFOLLOW on a link gives ELOOP; O_DIRECTORY on anything else ENOTDIR
            raise BadExport(f"{name} is not a plain folder (links are never followed): "
                            f"{error.strerror}", place=place) from None
        return descriptor

    def _directory(self, relative: str) -> int:
        if relative not in self._descriptors:
            self._descriptors[relative] = self._open_directory(self._descriptors[""], relative,
                                                               relative)
        return self._descriptors[relative]

    def read(self, relative: str, *, size: int | None = None, most: int | None = None) -> bytes:
        """The bytes of one regular file, which must hold exactly `size` bytes (or at most
        `most`), checked on the open file before reading."""
        folder, _, name = relative.rpartition("/")
        parent = self._directory(folder) if folder else self._descriptors[""]
        if not name or name in (".", "..") or "/" in name:
            raise BadExport("not a file name", place=relative)
        try:
            descriptor = os.open(name, os.O_RDONLY | os.O_NONBLOCK | NO_FOLLOW, dir_fd=parent)
        except FileNotFoundError:
            raise BadExport(f"{relative} is missing", place=relative) from None
        except OSError as error:
            raise BadExport(f"{relative} cannot be opened as a plain file (links are never "
                            f"followed): {error.strerror}", place=relative) from None
        try:
            info = os.fstat(descriptor)
            if not stat.S_ISREG(info.st_mode):
                raise BadExport(f"{relative} is not a regular file", place=relative)
            if size is not None and info.st_size != size:
                raise BadExport(f"{relative} holds {info.st_size} bytes; the manifest says "
                                f"{size}", place=relative)
            if most is not None and info.st_size > most:
                raise BadExport(f"{relative} holds {info.st_size} bytes, more than the "
                                f"{most} allowed", place=relative)
            return _read_exactly(descriptor, info.st_size, relative)
        finally:
            os.close(descriptor)


def _read_exactly(descriptor: int, size: int, place: str) -> bytes:
    chunks = []
    remaining = size
    while remaining > 0:
        chunk = os.read(descriptor, min(remaining, 1 << 20))
        if not chunk:
            raise BadExport("the file shrank while it was read", place=place)
        chunks.append(chunk)
        remaining -= len(chunk)
    if os.read(descriptor, 1):
        raise BadExport("the file grew while it was read", place=place)
    return b"".join(chunks)
