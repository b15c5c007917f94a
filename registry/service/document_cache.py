"""A server's copy, on its own disk, of the documents it hands to scoring servers, each file
named by the SHA-256 of its bytes.

Why: reading a large document out of PostgreSQL costs more CPU than sending it (the server
reassembles each piece from its out-of-line storage), and after a promotion every scoring
server asks for the same new document at once. Stored documents never change, so a server may
keep a copy: the first whole fetch of a document streams from the catalogue to the client as
always and, on the way, into a temporary file of the cache folder, renamed to the digest only
when the SHA-256 of what was written equals it.

Trust: the catalogue stays the authority. Which document a version or a stage's holder has is
read from the catalogue on every request; the copy only supplies the bytes of a digest the
catalogue named. A process serves a file only after it has hashed that file itself (while
writing it, or once on first use) and only while the file's inode, size and modification time
are what they were then; otherwise it hashes the file again, and a file whose bytes no longer
match is deleted and the bytes come from the catalogue. The folder is private to the server's
user (mode 0700; a folder others may write to is not used). The receiver has the last word:
`document get` and `release verify` check the SHA-256 of what arrived.

Disk use: at most `max_bytes`; the copies served least recently go first (the access time,
set on each use). Documents of one stored piece or less are not copied: one row of the
catalogue is as quick to read. A disk error of any kind (full, read-only, folder removed) makes
the cache step aside: the bytes come from the catalogue, and the client sees no difference.
"""

from __future__ import annotations

import hashlib
import logging
import os
import re
import stat
import tempfile
import threading
import time
from collections.abc import Iterator
from io import BufferedReader
from pathlib import Path

from registry.store.blob_store import CHUNK_SIZE

log = logging.getLogger(__name__)

DEFAULT_MAX_BYTES = 1 << 30
FILLING_PREFIX = ".filling-"
STALE_FILLING_SECONDS = 3600  # a temporary file this old belongs to a process that died
_DIGEST = re.compile(r"[0-9a-f]{64}")
_FileKey = tuple[int, int, int]  # inode, size, modification time (ns)


def default_folder() -> Path:
    """Where a server keeps its copies unless told otherwise: the user's cache folder (the XDG
    Base Directory specification's XDG_CACHE_HOME, else ~/.cache)."""
    base = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
    return Path(base) / "lockkeeper" / "documents"


def folder_setting(value: str | None) -> str:
    """The cache folder a server is told of: unset means the default folder, `off` none."""
    if value is None:
        return str(default_folder())
    return "" if value.strip().lower() == "off" else value


def _key(status: os.stat_result) -> _FileKey:
    return status.st_ino, status.st_size, status.st_mtime_ns


def _private_folder(folder: Path) -> bool:
    """Make `folder` (0700) if missing; True when it is a folder of ours nobody else may write."""
    try:
        folder.mkdir(mode=0o700, parents=True, exist_ok=True)
        status = folder.stat()
    except OSError as error:
        log.warning("document cache %s unusable, serving from the catalogue: %s", folder, error)
        return False
    if not stat.S_ISDIR(status.st_mode) or status.st_uid != os.getuid() \
            or status.st_mode & (stat.S_IWGRP | stat.S_IWOTH):
        log.warning("document cache %s is not a folder only this user may write; serving "
                    "from the catalogue", folder)
        return False
    return True


def _digest_of(handle: BufferedReader) -> str:
    handle.seek(0)
    digest = hashlib.file_digest(handle, "sha256").hexdigest()
    handle.seek(0)
    return digest


class DocumentCache:
    """The copies one server process uses; several processes may share the folder (files
    appear by rename, so a reader never sees half a file)."""

    def __init__(self, folder: Path | None, *, max_bytes: int = DEFAULT_MAX_BYTES,
                 min_bytes: int = CHUNK_SIZE + 1) -> None:
        self.folder = folder if folder is not None and _private_folder(folder) else None
        self.max_bytes, self.min_bytes = max_bytes, min_bytes
        self._verified: dict[str, _FileKey] = {}  # what this process hashed, as it was then
        self._filling: set[str] = set()
        self._lock = threading.Lock()

    @classmethod
    def off(cls) -> DocumentCache:
        return cls(None)

    def _worth_keeping(self, size: int) -> bool:
        return self.folder is not None and self.min_bytes <= size <= self.max_bytes

    def open(self, digest: str, size: int) -> BufferedReader | None:
        """The copy of `digest`, open for reading, or None (no copy, or not one to trust)."""
        if not self._worth_keeping(size) or not _DIGEST.fullmatch(digest):
            return None
        assert self.folder is not None
        path = self.folder / digest
        try:
            handle = path.open("rb")
        except OSError:
            return None
        try:
            key = _key(os.fstat(handle.fileno()))
            with self._lock:
                trusted = self._verified.get(digest) == key
            if not trusted:
                if key[1] != size or _digest_of(handle) != digest:
                    log.warning("document cache: %s does not hold those bytes; removed", path)
                    handle.close()
                    path.unlink(missing_ok=True)
                    return None
                with self._lock:
                    self._verified[digest] = key
            # The access time orders eviction; the modification time stays as verified.
            os.utime(handle.fileno(), ns=(time.time_ns(), key[2]))
            return handle
        except OSError:
            handle.close()
            return None

    def filling(self, digest: str, size: int, chunks: Iterator[bytes]) -> Iterator[bytes]:
        """`chunks`, passed on unchanged, and written to a copy of `digest` on the way; the copy
        is kept only if every byte arrived and its SHA-256 is `digest`."""
        if not self._worth_keeping(size) or not _DIGEST.fullmatch(digest):
            yield from chunks
            return
        with self._lock:
            if digest in self._filling:  # another request of this process is writing it
                busy = True
            else:
                busy = False
                self._filling.add(digest)
        if busy:
            yield from chunks
            return
        try:
            yield from self._tee(digest, size, chunks)
        finally:
            with self._lock:
                self._filling.discard(digest)

    def _tee(self, digest: str, size: int, chunks: Iterator[bytes]) -> Iterator[bytes]:
        assert self.folder is not None
        try:
            descriptor, temporary = tempfile.mkstemp(prefix=FILLING_PREFIX, dir=self.folder)
        except OSError:
            yield from chunks
            return
        hasher, written, writing, whole = hashlib.sha256(), 0, True, False
        try:
            with os.fdopen(descriptor, "wb") as handle:
                for chunk in chunks:
                    if writing:
                        try:
                            handle.write(chunk)
                        except OSError:
                            writing = False  # the disk said no: the client still gets its bytes
                        hasher.update(chunk)
                        written += len(chunk)
                    yield chunk
                whole = writing and written == size and hasher.hexdigest() == digest
                if whole:
                    handle.flush()
                    key = _key(os.fstat(handle.fileno()))
        except OSError:
            whole = False
        finally:
            if whole:
                self._keep(temporary, digest, key)
            else:
                Path(temporary).unlink(missing_ok=True)

    def _keep(self, temporary: str, digest: str, key: _FileKey) -> None:
        assert self.folder is not None
        try:
            os.replace(temporary, self.folder / digest)
        except OSError:
            Path(temporary).unlink(missing_ok=True)
            return
        with self._lock:
            self._verified[digest] = key
        self.evict(keep=digest)

    def evict(self, keep: str | None = None) -> None:
        """Remove the copies served least recently until the folder holds at most `max_bytes`
        (never `keep`), and temporary files left by a process that died."""
        if self.folder is None:
            return
        copies: list[tuple[float, int, Path]] = []
        try:
            entries = list(os.scandir(self.folder))
        except OSError:
            return
        now = time.time()
        for entry in entries:
            try:
                status = entry.stat(follow_symlinks=False)
            except OSError:
                continue
            if entry.name.startswith(FILLING_PREFIX):
                if now - status.st_mtime > STALE_FILLING_SECONDS:
                    Path(entry.path).unlink(missing_ok=True)
            elif _DIGEST.fullmatch(entry.name) and stat.S_ISREG(status.st_mode):
                copies.append((status.st_atime, status.st_size, Path(entry.path)))
        total = sum(size for _, size, _ in copies)
        for _, size, path in sorted(copies, key=lambda copy: copy[0]):
            if total <= self.max_bytes:
                break
            if path.name == keep:
                continue
            try:
                path.unlink()
            except OSError:
                continue
            total -= size
